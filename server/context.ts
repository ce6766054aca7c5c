import type { AuthService } from './auth/service.js';
import type { AuthRepository } from './auth/repository.js';
import type { CalendarService } from './calendar/service.js';
import type { CheckweigherService } from './checkweigher/service.js';
import type { Clock } from './clock.js';
import type { Config } from './config.js';
import type { Db } from './db/database.js';
import type { EscalationRepository } from './escalations/repository.js';
import type { EscalationService } from './escalations/service.js';
import type { WalSync } from './db/wal-sync.js';
import type { GroupCommitter } from './monitor/group-commit.js';
import type { Monitor, Repositories } from './monitor/monitor.js';

/** Everything a feature plugin may use; built once in app.ts and handed to each plugin. */
export interface HeftContext {
  db: Db;
  clock: Clock;
  config: Config;
  repos: Repositories & { auth: AuthRepository; escalations: EscalationRepository };
  monitor: Monitor;
  /** The writer's flush: nothing is answered before the changes it reports are on the disk. */
  wal: WalSync;
  /** Check entry goes through here: one commit for every check of an event-loop turn. */
  commits: GroupCommitter;
  auth: AuthService;
  /** Who is told of an alert that stays open; tests call sweep() and deliverDue() by hand. */
  escalations: EscalationService;
  /** Stops and starts lines at the plant's shift boundaries; tests call sweep() by hand. */
  calendar: CalendarService;
  /** An automatic checkweigher's packs made into checks; tests call flushStale() by hand. */
  checkweigher: CheckweigherService & { flushStale(): Promise<number> };
}
