import * as z from 'zod';

/** The roles Tidemark knows. An adjudicator is an over-reader with the right to adjudicate. */
export const roleSchema = z.enum([
  'study-admin',
  'site-coordinator',
  'over-reader',
  'adjudicator',
  'data-manager',
  'monitor',
]);
export type Role = z.infer<typeof roleSchema>;

/** One role held in one study; site coordinators are further scoped to sites. */
export const roleAssignmentSchema = z.object({
  studyId: z.string(),
  studyCode: z.string(),
  role: roleSchema,
  /** Sites this assignment is limited to; null means the whole study. */
  siteIds: z.array(z.string()).nullable(),
});
export type RoleAssignment = z.infer<typeof roleAssignmentSchema>;

export const currentUserSchema = z.object({
  id: z.string(),
  email: z.email(),
  name: z.string(),
});

/** `GET /api/me`: who is signed in, what they may do, and the CSRF token for writes. */
export const meResponseSchema = z.object({
  user: currentUserSchema,
  assignments: z.array(roleAssignmentSchema),
  csrfToken: z.string(),
});
export type MeResponse = z.infer<typeof meResponseSchema>;

/** Every API error has this body; `message` is written for the person using the app. */
export const errorResponseSchema = z.object({
  error: z.object({
    code: z.string(),
    message: z.string(),
    requestId: z.string().optional(),
    details: z.unknown().optional(),
  }),
});
export type ErrorResponse = z.infer<typeof errorResponseSchema>;

/** Header carrying the CSRF token on state-changing requests. */
export const CSRF_HEADER = 'x-csrf-token';
