/** Errors the domain raises; the error handler turns them into answers with a status and a message. */

export interface FieldIssue {
  field: string;
  message: string;
}

export class DomainError extends Error {
  constructor(
    readonly statusCode: number,
    readonly code: string,
    message: string,
    readonly issues: FieldIssue[] = [],
    readonly details?: Record<string, unknown>,
  ) {
    super(message);
    this.name = 'DomainError';
  }
}

export const notFound = (what: string) => new DomainError(404, 'not-found', `${what} was not found`);
export const conflict = (message: string, details?: Record<string, unknown>) =>
  new DomainError(409, 'conflict', message, [], details);
export const badField = (field: string, message: string) =>
  new DomainError(400, 'bad-request', `${field}: ${message}`, [{ field, message }]);
export const forbidden = (message = 'you may not do this') => new DomainError(403, 'forbidden', message);
export const unauthorized = (message = 'sign in first') => new DomainError(401, 'unauthorized', message);
