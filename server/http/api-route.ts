import type { Request, Response, Router } from 'express';
import { z } from 'zod';
import type { Principal } from '../auth/principal.js';
import { AppError } from './app-error.js';
import { checkAccess, type RouteAccess, type SiteScope } from './access.js';

type HttpMethod = 'get' | 'post' | 'put' | 'patch' | 'delete';
type AnyObjectSchema = z.ZodObject<z.ZodRawShape>;

/** What a handler receives: validated input and the access decision. */
export interface RouteContext<P, Q, B> {
  readonly req: Request;
  readonly res: Response;
  readonly principal: Principal | undefined;
  readonly siteScope: SiteScope;
  readonly params: P;
  readonly query: Q;
  readonly body: B;
}

/** One API route: its contract (for validation and the OpenAPI document), its access rule and its handler. */
export interface ApiRoute<
  P extends AnyObjectSchema = AnyObjectSchema,
  Q extends AnyObjectSchema = AnyObjectSchema,
  B extends z.ZodType = z.ZodType,
  R extends z.ZodType = z.ZodType,
> {
  readonly method: HttpMethod;
  /** Express path with `:name` parameters. */
  readonly path: string;
  readonly summary: string;
  readonly tag: string;
  readonly access: RouteAccess;
  readonly params?: P;
  readonly query?: Q;
  readonly body?: B;
  /** The success body; responses are parsed through it, so undeclared fields never leave the server. */
  readonly response?: R;
  readonly successStatus?: number;
  /** Routes that answer with a redirect or a file instead of JSON. */
  readonly responseDescription?: string;
  readonly handler: (
    context: RouteContext<z.infer<P>, z.infer<Q>, z.infer<B>>,
  ) => Promise<z.input<R> | void> | z.input<R> | void;
}

/** Keeps the routes of the app in one list: Express mounts them, the OpenAPI document describes them. */
export class ApiRouteRegistry {
  private readonly routes: ApiRoute[] = [];

  all(): readonly ApiRoute[] {
    return this.routes;
  }

  /** Declares a route and mounts it on the router. */
  add<P extends AnyObjectSchema, Q extends AnyObjectSchema, B extends z.ZodType, R extends z.ZodType>(
    router: Router,
    route: ApiRoute<P, Q, B, R>,
  ): void {
    this.routes.push(route as unknown as ApiRoute);
    router[route.method](route.path, async (req, res) => {
      const siteScope = checkAccess(route.access, req.principal, req.params as Record<string, string>);
      const context = {
        req,
        res,
        principal: req.principal,
        siteScope,
        params: parseInput(route.params, req.params, 'path'),
        query: parseInput(route.query, req.query, 'query'),
        body: parseInput(route.body, req.body, 'body'),
      };
      const result = await route.handler(context as never);
      if (res.headersSent) return;
      if (result === undefined) {
        res.status(route.successStatus ?? 204).end();
        return;
      }
      const body = route.response ? route.response.parse(result) : result;
      res.status(route.successStatus ?? 200).json(body);
    });
  }
}

function parseInput<T extends z.ZodType | undefined>(schema: T, value: unknown, where: string) {
  if (!schema) return undefined;
  const parsed = schema.safeParse(value ?? {});
  if (!parsed.success) {
    const problems = parsed.error.issues.map((issue) => {
      const field = issue.path.length ? issue.path.join('.') : where;
      return `${field}: ${issue.message}`;
    });
    throw AppError.badRequest(`Invalid ${where}: ${problems.join('; ')}`, { issues: parsed.error.issues }, 'invalid-input');
  }
  return parsed.data;
}
