import type { NextFunction, Request, Response, Router } from 'express';
import multer from 'multer';
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
  /** The uploaded file of a {@link ApiRoute.fileUpload} route. */
  readonly file: Express.Multer.File | undefined;
}

/** A multipart route: one file in `field`, plus the text fields the body schema parses. */
export interface FileUploadSpec {
  readonly field: string;
  readonly maxBytes: number;
  readonly description: string;
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
  /** For a {@link fileUpload} route, the multipart text fields. */
  readonly body?: B;
  /** Makes the route multipart/form-data with one file; access is checked before the file is read. */
  readonly fileUpload?: FileUploadSpec;
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
    const checkRouteAccess = (req: Request, res: Response, next: NextFunction) => {
      res.locals['siteScope'] = checkAccess(route.access, req.principal, req.params as Record<string, string>);
      next();
    };
    const receiveFile = route.fileUpload ? fileReceiver(route.fileUpload) : [];
    router[route.method](route.path, checkRouteAccess, ...receiveFile, async (req: Request, res: Response) => {
      if (route.fileUpload && !req.file) {
        throw AppError.badRequest(`Attach the file in the multipart field "${route.fileUpload.field}".`, undefined, 'file-missing');
      }
      const context = {
        req,
        res,
        principal: req.principal,
        siteScope: res.locals['siteScope'] as SiteScope,
        params: parseInput(route.params, req.params, 'path'),
        query: parseInput(route.query, req.query, 'query'),
        body: parseInput(route.body, req.body, 'body'),
        file: req.file,
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

/** Multer in memory with hard limits; its errors become messages that name the limit. */
function fileReceiver(spec: FileUploadSpec) {
  const upload = multer({
    storage: multer.memoryStorage(),
    limits: { fileSize: spec.maxBytes, files: 1, fields: 20, fieldSize: 64 * 1024, parts: 24 },
  }).single(spec.field);
  return [
    (req: Request, res: Response, next: NextFunction) => {
      upload(req, res, (error: unknown) => {
        if (error instanceof multer.MulterError) {
          next(multerProblem(error, spec));
          return;
        }
        // Anything else multer passes on is busboy refusing the body (cut short, no boundary, a part
        // without headers, not multipart/form-data): the request's fault, not the server's.
        if (error instanceof Error) {
          next(AppError.badRequest(`The upload could not be read as multipart/form-data: ${error.message}.`, undefined, 'upload-malformed'));
          return;
        }
        next(error);
      });
    },
  ];
}

function multerProblem(error: multer.MulterError, spec: FileUploadSpec): AppError {
  const megabytes = (spec.maxBytes / (1024 * 1024)).toFixed(spec.maxBytes % (1024 * 1024) === 0 ? 0 : 1);
  switch (error.code) {
    case 'LIMIT_FILE_SIZE':
      return new AppError(413, 'file-too-large', `The file is larger than the ${megabytes} MB accepted; nothing was stored.`);
    case 'LIMIT_UNEXPECTED_FILE':
      return AppError.badRequest(
        `Send exactly one file, in the multipart field "${spec.field}" (got field "${error.field ?? '?'}").`,
        undefined,
        'file-field',
      );
    default:
      return AppError.badRequest(`The upload could not be read: ${error.message}.`, undefined, 'upload-malformed');
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
