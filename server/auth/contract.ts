import { z } from 'zod';
import { instant, instantOrNull } from '../shared/contract.js';
import { freeText, idParam } from '../shared/schemas.js';
import { ROLES, type Role } from './secrets.js';

/** What the session, users, sign-in lock and token routes take and answer (API.md, "Access"). */

const username = z.string().trim().min(2).max(40).regex(/^[a-z0-9][a-z0-9._-]*$/i, 'letters, digits, dot, dash, underscore');
export const role = z.enum(ROLES as [Role, ...Role[]]);
const secret = z.string().min(1).max(200);

export const signInBody = z.strictObject({ username: z.string().min(1).max(100), secret });
export const boardSignInBody = z.strictObject({ token: z.string().min(1).max(200) });
export const clearLocksBody = z.strictObject({ username: z.string().trim().min(1).max(100).optional(), address: z.string().trim().min(1).max(100).optional() });
export const newUserBody = z.strictObject({ username, displayName: freeText(100), role, secret });
export const userPatch = z.strictObject({ displayName: freeText(100).optional(), role: role.optional(), disabled: z.boolean().optional(), secret: secret.optional() });
export const idParams = z.strictObject({ id: idParam });
export const newTokenBody = z.strictObject({ name: freeText(100), kind: z.enum(['checks', 'board']), lineIds: z.array(idParam).max(500).default([]) });

/** The signed-in person. */
export const sessionUserSchema = z.strictObject({ username: z.string(), displayName: z.string(), role });
export type SessionUser = z.output<typeof sessionUserSchema>;

/** `locked`: wrong sign-ins have locked this user out at one device or more (other devices still work). */
export const userViewSchema = z.strictObject({
  id: z.number(),
  username: z.string(),
  displayName: z.string(),
  role,
  disabled: z.boolean(),
  locked: z.boolean(),
  lastSignInAt: instantOrNull,
});
export type UserView = z.output<typeof userViewSchema>;

/** A count of wrong sign-ins for a username at an address (username null: every user of the address). */
export const lockViewSchema = z.strictObject({
  username: z.string().nullable(),
  address: z.string(),
  failures: z.number(),
  lastFailureAt: instant,
  lockedUntil: instantOrNull,
});

export const tokenViewSchema = z.strictObject({
  id: z.number(),
  name: z.string(),
  kind: z.enum(['checks', 'board']),
  lineIds: z.array(z.number()),
  createdBy: z.string(),
  createdAt: instant,
  revokedAt: instantOrNull,
  lastUsedAt: instantOrNull,
});
export type TokenView = z.output<typeof tokenViewSchema>;

export const sessionAnswer = z.strictObject({ user: sessionUserSchema });
export const boardSessionAnswer = z.strictObject({ board: z.strictObject({ name: z.string() }) });
export const userAnswer = z.strictObject({ user: userViewSchema });
export const userListAnswer = z.strictObject({ users: z.array(userViewSchema) });
export const lockListAnswer = z.strictObject({ locks: z.array(lockViewSchema) });
export const clearedAnswer = z.strictObject({ cleared: z.number() });
export const tokenAnswer = z.strictObject({ token: tokenViewSchema });
/** A new token: the secret is in this answer only. */
export const newTokenAnswer = z.strictObject({ token: tokenViewSchema.extend({ secret: z.string() }) });
export const tokenListAnswer = z.strictObject({ tokens: z.array(tokenViewSchema) });
