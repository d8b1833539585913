import * as z from 'zod';

export const apiTokenSummarySchema = z.object({
  id: z.string(),
  label: z.string(),
  createdAt: z.string(),
  lastUsedAt: z.string().nullable(),
  revokedAt: z.string().nullable(),
});
export type ApiTokenSummary = z.infer<typeof apiTokenSummarySchema>;

export const createApiTokenRequestSchema = z.object({
  label: z.string().trim().min(1, 'Give the token a label, e.g. the name of the system that uses it.').max(100),
});

/** The plain token appears in this response only; Tidemark keeps just its hash. */
export const createApiTokenResponseSchema = z.object({ id: z.string(), token: z.string() });
