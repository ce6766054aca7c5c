import { stringify } from 'csv-stringify';
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { Readable } from 'node:stream';
import { z } from 'zod';
import { QUALITY_UP } from '../auth/access.js';
import type { HeftContext } from '../context.js';
import { openReadOnly } from '../db/database.js';
import { resolveRange } from '../review/range.js';
import { idParam, reportRange } from '../shared/schemas.js';
import { EXPORTS, spreadsheetSafe, type ExportKind } from './columns.js';

const FILES = ['events.csv', 'events.json', 'checks.csv', 'checks.json', 'packs.csv', 'packs.json'] as const;

/**
 * GET /api/exports/{events,checks,packs}.{csv,json}: streamed row by row from a read-only connection of
 * its own (a long read must not hold the writer's connection), so a year costs no more memory than a day.
 */
export const exportsPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  app.get(
    '/api/exports/:file',
    {
      config: { roles: QUALITY_UP },
      schema: {
        params: z.strictObject({ file: z.enum(FILES) }),
        querystring: z.strictObject({ ...reportRange, lineId: idParam.optional() }),
      },
    },
    async (req, reply) => {
      const [kind, format] = req.params.file.split('.') as [ExportKind, 'csv' | 'json'];
      const { from, to } = resolveRange(req.query, ctx.clock.now(), ctx.config.timeZone);
      const spec = EXPORTS[kind];
      const reader = openReadOnly(ctx.db.name, { busyTimeoutMs: ctx.config.busyTimeoutMs });
      const rows = spec.rows(reader, { from, to, lineId: req.query.lineId ?? null }, ctx.config.timeZone);
      const close = () => {
        if (reader.open) reader.close();
      };
      let stream: Readable;
      if (format === 'csv') {
        const csv = stringify({ header: true, columns: spec.columns.map((c) => ({ key: c, header: c })), cast: { boolean: (b) => (b ? 'true' : 'false'), string: spreadsheetSafe } });
        stream = Readable.from(rows).pipe(csv);
        reply.type('text/csv; charset=utf-8');
      } else {
        stream = Readable.from(jsonArray(kind, rows));
        reply.type('application/json; charset=utf-8');
      }
      stream.on('close', close);
      stream.on('error', close);
      reply.raw.on('close', close);
      reply.header('content-disposition', `attachment; filename="heft-${kind}-${new Date(from).toISOString().slice(0, 10)}-to-${new Date(to).toISOString().slice(0, 10)}.${format}"`);
      return reply.send(stream);
    },
  );
};

async function* jsonArray(kind: string, rows: Iterable<Record<string, unknown>>): AsyncGenerator<string> {
  yield `{"${kind}":[`;
  let first = true;
  for (const row of rows) {
    yield `${first ? '' : ','}\n${JSON.stringify(row)}`;
    first = false;
  }
  yield '\n]}\n';
}
