import { createHash, randomBytes, scrypt, timingSafeEqual } from 'node:crypto';

export type Role = 'operator' | 'supervisor' | 'quality' | 'admin';
export const ROLES: readonly Role[] = ['operator', 'supervisor', 'quality', 'admin'];

const KEY_LENGTH = 32;
// N = 2^14, r = 8, p = 1: the scrypt parameters RFC 7914 §2 cites for interactive sign-in.
const SCRYPT = { N: 16384, r: 8, p: 1, maxmem: 64 * 1024 * 1024 };

function scryptAsync(secret: string, salt: Buffer): Promise<Buffer> {
  return new Promise((resolve, reject) => {
    scrypt(secret, salt, KEY_LENGTH, SCRYPT, (err, key) => (err ? reject(err) : resolve(key)));
  });
}

export async function hashSecret(secret: string): Promise<{ hash: string; salt: string }> {
  const salt = randomBytes(16);
  const key = await scryptAsync(secret, salt);
  return { hash: key.toString('base64'), salt: salt.toString('base64') };
}

/** Compares in constant time, so how long a wrong secret takes tells nothing about it. */
export async function verifySecret(secret: string, hash: string, salt: string): Promise<boolean> {
  const expected = Buffer.from(hash, 'base64');
  const key = await scryptAsync(secret, Buffer.from(salt, 'base64'));
  return expected.length === key.length && timingSafeEqual(expected, key);
}

/** Operators and supervisors sign in at the line with a PIN; quality and admin with a password. */
export function secretProblem(role: Role, secret: string): string | null {
  if (role === 'operator' || role === 'supervisor') {
    return /^\d{4,12}$/.test(secret) ? null : 'a PIN of 4 to 12 digits';
  }
  return secret.length >= 12 && secret.length <= 200 ? null : 'a password of at least 12 characters';
}

/** A random 256-bit value for session ids and tokens, URL-safe. */
export function randomToken(): string {
  return randomBytes(32).toString('base64url');
}

/** Stored form of a session id or token: SHA-256, so a copy of the database signs nobody in. */
export function tokenHash(token: string): string {
  return createHash('sha256').update(token).digest('hex');
}
