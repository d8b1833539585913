import * as z from 'zod';

export const componentHealthSchema = z.object({
  status: z.enum(['up', 'down']),
  latencyMs: z.number(),
  /** Why a component is down, in words. */
  detail: z.string().optional(),
});

export const healthResponseSchema = z.object({
  status: z.enum(['ok', 'degraded']),
  version: z.string(),
  checks: z.object({
    database: componentHealthSchema,
    storage: componentHealthSchema,
    identityProvider: componentHealthSchema,
    mail: componentHealthSchema,
  }),
});
export type HealthResponse = z.infer<typeof healthResponseSchema>;
