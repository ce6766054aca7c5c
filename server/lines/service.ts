import type { HeftContext } from '../context.js';
import { conflict, notFound } from '../errors.js';
import type { Line } from './repository.js';

/** Creating and changing lines: each change and its audit row in one transaction, then the engine reloads the line. */
export function createLineService(ctx: Pick<HeftContext, 'db' | 'clock' | 'repos' | 'monitor'>) {
  const { db, clock, repos, monitor } = ctx;
  const codeTaken = (code: string, except?: number) => repos.lines.list().some((l) => l.code === code && l.id !== except);

  return {
    create(fields: Omit<Line, 'id'>, actor: string): Line {
      if (codeTaken(fields.code)) throw conflict(`a line with code ${fields.code} exists already`);
      const now = clock.now();
      const line = db.transaction(() => {
        const created = repos.lines.create(fields, now);
        repos.audit.record({ at: now, actor, action: 'line.create', entity: 'line', entityId: created.id, after: created });
        return created;
      }).immediate();
      monitor.reloadLine(line.id);
      return line;
    },

    update(lineId: number, change: Partial<Omit<Line, 'id'>>, actor: string): Line {
      const before = repos.lines.get(lineId);
      if (!before) throw notFound(`line ${lineId}`);
      const next: Line = {
        ...before,
        ...change,
        packsPerHour: change.packsPerHour === undefined ? before.packsPerHour : change.packsPerHour,
        continuous: change.continuous ?? before.continuous,
      };
      if (next.code !== before.code && codeTaken(next.code, before.id)) throw conflict(`a line with code ${next.code} exists already`);
      const now = clock.now();
      const line = db.transaction(() => {
        const updated = repos.lines.update(next, now);
        repos.audit.record({ at: now, actor, action: 'line.update', entity: 'line', entityId: before.id, before, after: updated });
        return updated;
      }).immediate();
      monitor.reloadLine(line.id);
      return line;
    },
  };
}
