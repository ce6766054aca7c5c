import cookie from '@fastify/cookie';
import rateLimit from '@fastify/rate-limit';
import Fastify, { LogController, type FastifyInstance, type FastifyServerOptions } from 'fastify';
import { serializerCompiler, validatorCompiler } from 'fastify-type-provider-zod';
import { installAccess } from './auth/access.js';
import { installSecurityHeaders } from './shared/security-headers.js';
import { authPlugin } from './auth/routes.js';
import { createAuthRepository } from './auth/repository.js';
import { createAuthService } from './auth/service.js';
import { alertsPlugin } from './alerts/routes.js';
import { createAlertRepository } from './alerts/repository.js';
import { auditPlugin } from './audit/routes.js';
import { createAuditRepository } from './audit/repository.js';
import { checksPlugin } from './checks/routes.js';
import { createCheckRepository } from './checks/repository.js';
import type { Clock } from './clock.js';
import type { Config } from './config.js';
import type { HeftContext } from './context.js';
import type { Db } from './db/database.js';
import { installErrorHandler } from './error-handler.js';
import { healthPlugin } from './health/routes.js';
import { limitsPlugin } from './limits/routes.js';
import { createLimitsRepository } from './limits/repository.js';
import { LiveHub } from './live/hub.js';
import { createLiveRepository } from './live/repository.js';
import { livePlugin } from './live/routes.js';
import { linesPlugin } from './lines/routes.js';
import { createLineStopRepository } from './lines/stops-repository.js';
import { createLineRepository } from './lines/repository.js';
import { GroupCommitter } from './monitor/group-commit.js';
import { createWalSync, type FileFlusher } from './db/wal-sync.js';
import { startCheckpointer, type Checkpointer } from './db/checkpointer.js';
import { DailyBackups } from './db/daily-backups.js';
import { pruneOnce } from './db/housekeeping.js';
import { createCalendarRepository } from './calendar/repository.js';
import { calendarPlugin } from './calendar/routes.js';
import { scalesPlugin } from './scales/routes.js';
import { checkweigherPlugin } from './checkweigher/routes.js';
import { createCheckweigherRepository } from './checkweigher/repository.js';
import { createCheckweigherService } from './checkweigher/service.js';
import { createCalendarService } from './calendar/service.js';
import { networkDeliverers, type Deliverers } from './escalations/delivery.js';
import { createEscalationRepository } from './escalations/repository.js';
import { escalationsPlugin } from './escalations/routes.js';
import { createEscalationService } from './escalations/service.js';
import type { LiveEvent } from './live/messages.js';
import { Monitor } from './monitor/monitor.js';
import { createMonitorStateRepository } from './monitor/state-repository.js';
import { checkMessageParts } from './monitor/views.js';
import { productsPlugin } from './products/routes.js';
import { exportsPlugin } from './exports/routes.js';
import { reviewPlugin } from './review/routes.js';
import { webPlugin } from './web/routes.js';
import { registerOpenApi } from './openapi/plugin.js';
import { VERSION } from './health/routes.js';
import { createProductRepository } from './products/repository.js';

export interface AppOptions {
  db: Db;
  clock: Clock;
  config: Config;
  logger?: FastifyServerOptions['logger'];
  /** Where committed live messages go; the live hub plugs in here. */
  onLive?: (events: LiveEvent[]) => void;
  /** How notifications leave (tests put in their own or point SMTP at a server of their own). */
  deliverers?: Deliverers;
  /** Sweep for overdue checks on a timer (off in tests, which call monitor.sweepOverdue() by hand). */
  overdueTimer?: boolean;
  /** With config.backupDir: take the daily backup on a timer (off in tests, which call runIfDue by hand). */
  backupTimer?: boolean;
  /** Run WAL checkpoints on a thread of their own (the server does; tests that are about it turn it on). */
  checkpointThread?: boolean;
  /** How the WAL is flushed before an answer (tests hold it to see that nothing is answered before). */
  walFlusher?: FileFlusher;
}

declare module 'fastify' {
  interface FastifyRequest {
    /** Set once the group commit has flushed what this request wrote (or found it wrote nothing). */
    flushed: boolean;
  }
  interface FastifyInstance {
    heft: HeftContext;
    /** WAL checkpoints on their own thread, when `checkpointThread` is on. */
    checkpointer: Checkpointer | null;
    /** The daily backups, when a backup folder is set. */
    backups: DailyBackups | null;
  }
}

/** Builds the whole app on a migrated database; never listens. */
export async function buildApp(options: AppOptions): Promise<FastifyInstance> {
  const { db, clock, config } = options;
  const app = Fastify({
    logger: options.logger ?? false,
    bodyLimit: 256 * 1024,
    trustProxy: config.trustProxy,
    forceCloseConnections: true,
    // one line per request drowns what matters on a line-side box; errors and warnings still log
    logController: new LogController({ disableRequestLogging: true }),
    routerOptions: { maxParamLength: 200 },
  });
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  installErrorHandler(app);

  const listeners: ((events: LiveEvent[]) => void)[] = [];
  if (options.onLive) listeners.push(options.onLive);
  const checks = createCheckRepository(db);
  const alerts = createAlertRepository(db);
  const repos = {
    lines: createLineRepository(db),
    stops: createLineStopRepository(db),
    products: createProductRepository(db),
    checks,
    alerts,
    limits: createLimitsRepository(db),
    monitorState: createMonitorStateRepository(db),
    audit: createAuditRepository(db),
    live: createLiveRepository(db, checkMessageParts(checks, alerts)),
    auth: createAuthRepository(db),
    escalations: createEscalationRepository(db),
  };
  const monitor = new Monitor({
    db,
    clock,
    repos,
    overdueGraceMinutes: config.overdueGraceMinutes,
    publish: (events) => {
      for (const listen of listeners) {
        try {
          listen(events);
        } catch (err) {
          app.log.error({ err }, 'a live listener failed');
        }
      }
    },
  });
  const auth = createAuthService({
    db,
    clock,
    repo: repos.auth,
    audit: repos.audit,
    sessionIdleMs: config.sessionIdleMinutes * 60_000,
    sessionMaxMs: config.sessionMaxHours * 3_600_000,
  });
  const housekeeping = {
    live: repos.live,
    auth: repos.auth,
    liveKeepMs: config.liveKeepDays * 86_400_000,
    sessionIdleMs: config.sessionIdleMinutes * 60_000,
    sessionMaxMs: config.sessionMaxHours * 3_600_000,
  };
  const wal = createWalSync(db, options.walFlusher);
  const escalations = createEscalationService({
    db,
    clock,
    repos,
    deliverers: options.deliverers ?? networkDeliverers({ smtpUrl: config.smtpUrl, mailFrom: config.mailFrom, timeoutMs: 5000 }),
    publicUrl: config.publicUrl ?? `http://${config.host}:${config.port}`,
    timeZone: config.timeZone,
    maxInFlight: config.webhookMaxInFlight,
    onSent: (alertId) => monitor.alertChanged(alertId),
    durable: () => wal.durable(),
    log: (message, err) => app.log.error({ err }, message),
  });
  const calendar = createCalendarService({ db, clock, config, repos, monitor, calendarRepo: createCalendarRepository(db) });
  const commits = new GroupCommitter(monitor, wal);
  const checkweigherService = createCheckweigherService({ db, clock, repos, monitor, packs: createCheckweigherRepository(db) });
  const checkweigher = {
    ...checkweigherService,
    /** Judges, with what they have, the partial checks whose first pack is a sampling interval old. */
    async flushStale(): Promise<number> {
      const stale = checkweigherService.linesWithStalePacks();
      await Promise.all(stale.map((lineId) => commits.submit(() => checkweigherService.flushPartial(lineId))));
      return stale.length;
    },
  };
  const ctx: HeftContext = { db, clock, config, repos, monitor, wal, commits, auth, escalations, calendar, checkweigher };
  app.decorate('heft', ctx);
  // the writer commits without an fsync of its own: an answer to a change waits until what the change
  // wrote is on the disk (a check's answer has waited already, in the group commit: this returns at once)
  app.decorateRequest('flushed', false);
  const checkpointer = options.checkpointThread ? startCheckpointer(db, { log: (m) => app.log.error(m) }) : null;
  app.decorate('checkpointer', checkpointer);
  app.addHook('onClose', async () => checkpointer?.stop());
  app.addHook('onClose', async () => {
    // the last changes (background sweeps) to the disk before the descriptor goes; a failure is logged
    await wal.durable().catch((err: unknown) => app.log.error({ err }, 'the WAL could not be flushed at close'));
    wal.close();
  });
  app.addHook('onSend', (request, reply, payload, done) => {
    // a check's answer waited in the group commit already (its batch's flush): no second flush for it
    if (request.method === 'GET' || request.method === 'HEAD' || request.flushed) return done(null, payload);
    wal.durable().then(
      () => done(null, payload),
      (err: unknown) => {
        // the change is stored but not known to be on the disk: say so rather than that it worked
        app.log.error({ err }, 'the WAL could not be flushed');
        reply.code(503).header('content-type', 'application/json; charset=utf-8');
        done(null, JSON.stringify({ error: 'not-flushed', message: `the change could not be flushed to the disk (${err instanceof Error ? err.message : String(err)}); try again`, issues: [] }));
      },
    );
  });
  const hub = new LiveHub({ live: repos.live, now: () => clock.now() });
  listeners.push((events) => hub.publish(events));
  app.decorate('liveHub', hub);

  installSecurityHeaders(app, { secureCookies: config.secureCookies });
  await app.register(cookie);
  await app.register(rateLimit, { global: false });
  installAccess(app, auth);

  await registerOpenApi(app, VERSION);
  const backups = config.backupDir
    ? new DailyBackups({
        db,
        dir: config.backupDir,
        clock,
        timeZone: config.timeZone,
        keepDaily: config.backupKeepDaily,
        keepWeekly: config.backupKeepWeekly,
        log: (level, message, err) => (level === 'error' ? app.log.error({ err }, message) : app.log.info(message)),
      })
    : null;
  app.decorate('backups', backups);
  if (backups && options.backupTimer) {
    backups.start();
    app.addHook('onClose', async () => backups.stop());
  }
  await app.register(healthPlugin, { plant: { name: config.plantName, timeZone: config.timeZone }, lastBackup: () => backups?.last() ?? null });
  await app.register(authPlugin, { ctx });
  await app.register(linesPlugin, { ctx });
  await app.register(productsPlugin, { ctx });
  await app.register(checksPlugin, { ctx });
  await app.register(alertsPlugin, { ctx });
  await app.register(limitsPlugin, { ctx });
  await app.register(auditPlugin, { ctx });
  await app.register(reviewPlugin, { ctx });
  await app.register(exportsPlugin, { ctx });
  await app.register(escalationsPlugin, { ctx });
  await app.register(calendarPlugin, { ctx });
  await app.register(scalesPlugin, { ctx });
  await app.register(checkweigherPlugin, { ctx });
  await app.register(livePlugin, { ctx, hub });
  await app.register(webPlugin);

  // escalation: decide (stored in the outbox) and send after the commit; at once when an alert opens or
  // changes, and on the sweep's timer for delays, retries and what a restart left pending
  let escalating = false;
  const escalateSoon = () => {
    if (escalating) return;
    escalating = true;
    setImmediate(() => {
      try {
        escalations.sweep();
      } catch (err) {
        app.log.error({ err }, 'escalation sweep failed');
      }
      escalations
        .deliverDue()
        .catch((err) => app.log.error({ err }, 'escalation delivery failed'))
        .finally(() => (escalating = false));
    });
  };
  if (options.overdueTimer) {
    listeners.push((events) => {
      if (events.some((e) => e.type === 'alert-opened' || e.type === 'alert-updated')) escalateSoon();
    });
    escalateSoon();
  }
  if (options.overdueTimer) {
    let sweeps = 0;
    let pruning = false;
    const timer = setInterval(() => {
      try {
        calendar.sweep();
      } catch (err) {
        app.log.error({ err }, 'calendar sweep failed');
      }
      try {
        monitor.sweepOverdue();
      } catch (err) {
        app.log.error({ err }, 'overdue sweep failed');
      }
      checkweigher.flushStale().catch((err) => app.log.error({ err }, 'forming partial checks failed'));
      escalateSoon();
      // every ten minutes: live messages past the resume window and sessions no one can use any more
      sweeps += 1;
      if (sweeps % 40 === 0 && !pruning) {
        pruning = true;
        pruneOnce({ ...housekeeping, clock })
          .catch((err) => app.log.error({ err }, 'housekeeping failed'))
          .finally(() => (pruning = false));
      }
    }, 15_000);
    timer.unref();
    app.addHook('onClose', async () => clearInterval(timer));
  }
  return app;
}
