import { z } from 'zod';
import { errorResponseSchema } from '../../shared/contracts/auth.js';
import type { ApiRoute } from '../http/api-route.js';
import { describeRoles } from '../http/access.js';

type JsonSchema = Record<string, unknown>;

function toJsonSchema(schema: z.ZodType, io: 'input' | 'output'): JsonSchema {
  const { $schema: _ignored, ...rest } = z.toJSONSchema(schema, { io, unrepresentable: 'any' }) as JsonSchema;
  return rest;
}

function accessText(route: ApiRoute): string {
  switch (route.access.kind) {
    case 'public':
      return 'Public.';
    case 'signed-in':
      return 'Any signed-in user.';
    case 'study':
      return `Roles in the study: ${describeRoles(route.access.roles)}.`;
  }
}

function parametersOf(schema: z.ZodObject<z.ZodRawShape> | undefined, location: 'path' | 'query') {
  if (!schema) return [];
  return Object.entries(schema.shape).map(([name, field]) => ({
    name,
    in: location,
    required: location === 'path' || !(field as z.ZodType).safeParse(undefined).success,
    schema: toJsonSchema(field as z.ZodType, 'input'),
  }));
}

/** Builds the OpenAPI 3.1 document from the registered routes' zod contracts. */
export function buildOpenApiDocument(routes: readonly ApiRoute[], version: string): JsonSchema {
  const paths: Record<string, Record<string, unknown>> = {};
  for (const route of routes) {
    const openApiPath = route.path.replace(/:([A-Za-z0-9_]+)/g, '{$1}');
    const success = String(route.successStatus ?? (route.response ? 200 : 204));
    const responses: Record<string, unknown> = {
      [success]: route.response
        ? { description: 'Success', content: { 'application/json': { schema: toJsonSchema(route.response, 'output') } } }
        : { description: route.responseDescription ?? 'Success, no body' },
    };
    for (const status of ['400', '401', '403', '404', '409', ...(route.fileUpload ? ['413', '422'] : [])]) {
      responses[status] = { $ref: '#/components/responses/Error' };
    }
    paths[openApiPath] ??= {};
    paths[openApiPath][route.method] = {
      summary: route.summary,
      description: accessText(route),
      tags: [route.tag],
      'x-tidemark-access': route.access,
      security: route.access.kind === 'public' ? [] : [{ sessionCookie: [] }, { bearerToken: [] }],
      parameters: [...parametersOf(route.params, 'path'), ...parametersOf(route.query, 'query')],
      ...(route.fileUpload
        ? {
            requestBody: {
              required: true,
              description: route.fileUpload.description,
              content: {
                'multipart/form-data': {
                  schema: {
                    type: 'object',
                    required: [route.fileUpload.field],
                    properties: {
                      [route.fileUpload.field]: {
                        type: 'string',
                        format: 'binary',
                        description: `At most ${route.fileUpload.maxBytes} bytes.`,
                      },
                      ...(route.body ? ((toJsonSchema(route.body, 'input').properties as JsonSchema | undefined) ?? {}) : {}),
                    },
                  },
                },
              },
            },
          }
        : route.body
        ? {
            requestBody: {
              required: true,
              content: { 'application/json': { schema: toJsonSchema(route.body, 'input') } },
            },
          }
        : {}),
      responses,
    };
  }
  return {
    openapi: '3.1.0',
    info: {
      title: 'Tidemark API',
      version,
      description:
        'Central over-reading of spirometry for clinical trials. Writes from a browser session need the x-csrf-token header; automation uses a bearer token.',
    },
    servers: [{ url: '/' }],
    paths,
    components: {
      securitySchemes: {
        sessionCookie: { type: 'apiKey', in: 'cookie', name: 'tidemark_session' },
        bearerToken: { type: 'http', scheme: 'bearer' },
      },
      responses: {
        Error: {
          description: 'An error, explained in `error.message`',
          content: { 'application/json': { schema: toJsonSchema(errorResponseSchema, 'output') } },
        },
      },
    },
  };
}
