/**
 * The ingest floor: a bare Fastify route that validates the same check body with zod and inserts one
 * row per request with the same pragmas Heft uses (WAL, synchronous=FULL). One commit per request.
 */
import Database from 'better-sqlite3';
import Fastify from 'fastify';
import { serializerCompiler, validatorCompiler, type ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { checkBody } from '../server/checks/contract.js';

const [file, port] = process.argv.slice(2);
const db = new Database(file as string);
db.pragma('journal_mode = WAL');
db.pragma('synchronous = FULL');
db.exec('CREATE TABLE IF NOT EXISTS floor_checks (id INTEGER PRIMARY KEY, line_id INTEGER, client_id TEXT UNIQUE, weights TEXT, at INTEGER)');
const insert = db.prepare('INSERT INTO floor_checks (line_id, client_id, weights, at) VALUES (?, ?, ?, ?)');
const app = Fastify({ logger: false });
app.setValidatorCompiler(validatorCompiler);
app.setSerializerCompiler(serializerCompiler);
app.withTypeProvider<ZodTypeProvider>().post('/api/lines/:lineId/checks', { schema: { params: z.object({ lineId: z.coerce.number().int().positive() }), body: checkBody } }, async (req, reply) => {
  const id = Number(insert.run(req.params.lineId, req.body.clientId, JSON.stringify(req.body.weights), Date.now()).lastInsertRowid);
  return reply.code(201).send({ id });
});
app.get('/api/health', async () => ({ status: 'ok' }));
await app.listen({ port: Number(port), host: '127.0.0.1' });
process.stdout.write('floor ready\n');
