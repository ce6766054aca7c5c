import { mkdirSync, rmSync, statSync } from 'node:fs';
import { join } from 'node:path';
import type { Clock } from '../clock.js';
import { localParts } from '../shared/time-zone.js';
import { backupDatabase, backupsToKeep, listBackups, type BackupReport } from './backup.js';
import type { Db } from './database.js';

export interface DailyBackupOptions {
  db: Db;
  dir: string;
  clock: Clock;
  timeZone: string;
  keepDaily: number;
  keepWeekly: number;
  log: (level: 'info' | 'error', message: string, detail?: unknown) => void;
  /** How often to look whether today's backup is due. */
  everyMs?: number;
}

/** Pages copied between two turns of the event loop: small enough that checks keep flowing during a backup. */
const PAGES_PER_STEP = 256;

/**
 * The server's own daily backup: once per plant-local day, heft-YYYY-MM-DD.db in the backup folder,
 * then the old ones pruned (the last `keepDaily`, and one per week for `keepWeekly` weeks, stay).
 */
export class DailyBackups {
  private lastReport: BackupReport | null = null;
  private running: Promise<BackupReport | null> | null = null;
  private timer: NodeJS.Timeout | null = null;

  constructor(private readonly options: DailyBackupOptions) {
    mkdirSync(options.dir, { recursive: true });
  }

  start(): void {
    void this.runIfDue();
    this.timer = setInterval(() => void this.runIfDue(), this.options.everyMs ?? 10 * 60_000);
    this.timer.unref();
  }

  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    await this.running;
  }

  /** The newest backup this server took, for GET /api/health. */
  last(): BackupReport | null {
    if (this.lastReport) return this.lastReport;
    const newest = listBackups(this.options.dir)[0];
    if (!newest) return null;
    const file = join(this.options.dir, newest);
    const { mtimeMs, size } = statSync(file);
    return { file, at: mtimeMs, bytes: size, checks: null };
  }

  private today(): string {
    const p = localParts(this.options.clock.now(), this.options.timeZone);
    return `${p.year}-${String(p.month).padStart(2, '0')}-${String(p.day).padStart(2, '0')}`;
  }

  /** Takes today's backup unless it exists; prunes the old ones. Never throws: a failed backup is logged and tried again later. */
  runIfDue(): Promise<BackupReport | null> {
    if (this.running) return this.running;
    const name = `heft-${this.today()}.db`;
    if (listBackups(this.options.dir).includes(name)) return Promise.resolve(null);
    this.running = (async () => {
      try {
        const report = await backupDatabase(this.options.db, join(this.options.dir, name), PAGES_PER_STEP, () => this.options.clock.now());
        this.lastReport = report;
        this.options.log('info', `backup ${report.file}: ${report.checks} checks, ${report.bytes} bytes`);
        const keep = backupsToKeep(listBackups(this.options.dir), this.options.keepDaily, this.options.keepWeekly);
        for (const old of listBackups(this.options.dir)) if (!keep.has(old)) rmSync(join(this.options.dir, old), { force: true });
        return report;
      } catch (err) {
        this.options.log('error', 'the daily backup failed; it is tried again later', err);
        return null;
      } finally {
        this.running = null;
      }
    })();
    return this.running;
  }
}
