import type { Actor } from '../auth/service.js';
import type { HeftContext } from '../context.js';
import { notFound } from '../errors.js';
import type { ScaleProfileView } from './contract.js';
import { inUnit, readingReader, type Reading, type ScaleUnit } from './reading.js';
import { DEFAULT_SCALE_PROFILE, type ScaleProfile, type ScaleRepository } from './repository.js';

/** Each line's scale profile (with its audit), the reading of a sample line, and the lines a scale may feed. */
export function createScaleService(ctx: Pick<HeftContext, 'db' | 'clock' | 'repos' | 'monitor'> & { scales: ScaleRepository }) {
  const { db, clock, repos, monitor, scales } = ctx;

  const lineOrThrow = (lineId: number) => {
    const line = repos.lines.get(lineId);
    if (!line) throw notFound(`line ${lineId}`);
    return line;
  };

  const view = (lineId: number): ScaleProfileView => {
    const stored = scales.get(lineId);
    const profile: ScaleProfile = stored ?? DEFAULT_SCALE_PROFILE;
    return {
      connection: profile.connection,
      baudRate: profile.baudRate,
      dataBits: profile.dataBits,
      parity: profile.parity,
      stopBits: profile.stopBits,
      lineEnding: profile.lineEnding,
      pattern: profile.pattern,
      unstablePattern: profile.unstablePattern,
      defaultUnit: profile.defaultUnit,
      sendOnLast: profile.sendOnLast,
      configured: stored !== null,
      updatedAt: stored ? new Date(stored.updatedAt).toISOString() : null,
      updatedBy: stored?.updatedBy ?? null,
    };
  };

  return {
    view(lineId: number): ScaleProfileView {
      lineOrThrow(lineId);
      return view(lineId);
    },

    replace(lineId: number, profile: ScaleProfile, actor: string): ScaleProfileView {
      lineOrThrow(lineId);
      const now = clock.now();
      db.transaction(() => {
        const before = scales.get(lineId);
        scales.put(lineId, profile, now, actor);
        repos.audit.record({ at: now, actor, action: 'scale.update', entity: 'line', entityId: lineId, before, after: profile });
      }).immediate();
      return view(lineId);
    },

    /** A sample line as the line's profile (with any fields given in its place) reads it, in the running product's unit too. */
    tryReading(lineId: number, sample: string, over: { pattern?: string | null; unstablePattern?: string | null; defaultUnit?: ScaleUnit }) {
      lineOrThrow(lineId);
      const saved = scales.get(lineId) ?? DEFAULT_SCALE_PROFILE;
      const read = readingReader({
        pattern: over.pattern === undefined ? saved.pattern : over.pattern,
        unstablePattern: over.unstablePattern === undefined ? saved.unstablePattern : over.unstablePattern,
        defaultUnit: over.defaultUnit ?? saved.defaultUnit,
      });
      const reading: Reading = read(sample);
      const unit = monitor.lineState(lineId).product?.unit ?? null;
      return reading.kind === 'weight' ? { ...reading, inProductUnit: unit ? inUnit(reading.value, reading.unit, unit) : null } : reading;
    },

    /** The lines this caller may post checks to (a checks token: its own), each with its product and profile. */
    linesFor(actor: Actor) {
      const all = repos.lines.list();
      const mine = actor.kind === 'token' ? all.filter((l) => actor.lineIds.includes(l.id)) : all;
      return mine.map((l) => {
        const product = monitor.lineState(l.id).product;
        return {
          id: l.id,
          code: l.code,
          name: l.name,
          product: product ? { code: product.code, unit: product.unit, subgroupSize: product.subgroupSize, samplingMinutes: product.samplingMinutes, entryBasis: product.entryBasis } : null,
          scale: view(l.id),
        };
      });
    },
  };
}

export type ScaleService = ReturnType<typeof createScaleService>;
