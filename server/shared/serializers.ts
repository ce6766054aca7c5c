import type { FastifySerializerCompiler } from 'fastify';

/**
 * For the check answers only, the hottest routes: JSON.stringify without zod encoding the answer
 * against its schema on the way out (a tenth of the server's time per check, measured). The schema
 * still describes the route (OpenAPI, the pages' types), the handler's return type is checked
 * against it at compile time, and test/api/contract.test.ts parses real answers of both check
 * routes with it. The views carry no transforms, so encoding would change nothing in the text.
 */
export const plainJson: FastifySerializerCompiler<unknown> = () => (data) => JSON.stringify(data);
