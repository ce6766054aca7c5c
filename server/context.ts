import type { AuthService } from './auth/service.js';
import type { AuthRepository } from './auth/repository.js';
import type { Clock } from './clock.js';
import type { Config } from './config.js';
import type { Db } from './db/database.js';
import type { Monitor, Repositories } from './monitor/monitor.js';

/** Everything a feature plugin may use; built once in app.ts and handed to each plugin. */
export interface HeftContext {
  db: Db;
  clock: Clock;
  config: Config;
  repos: Repositories & { auth: AuthRepository };
  monitor: Monitor;
  auth: AuthService;
}
