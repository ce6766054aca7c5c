import { existsSync, rmSync } from 'node:fs';
import { generateDemo } from '../demo-data/generate.js';
import { DEMO_USERS, PLANT } from '../demo-data/scenario.js';
import { startSimulator } from '../demo-data/simulator.js';
import { buildApp } from './app.js';
import { systemClock } from './clock.js';
import { ConfigError, helpText, parseConfig, type Config } from './config.js';
import { openDatabase } from './db/database.js';
import { migrate } from './db/migrate.js';
import { databaseInUse, removePidFile, writePidFile } from './db/backup.js';
import { ensureWebBuilt } from './web/build.js';
import type { LiveEvent } from './live/messages.js';

/** Two servers on one database would each judge checks on their own memory of the lines: refuse the second. */
function refuseIfInUse(dbFile: string): void {
  const running = databaseInUse(dbFile);
  if (running !== null) throw new Error(`another Heft server (process ${running}) has ${dbFile} open`);
}

async function prepareDemo(config: Config): Promise<void> {
  refuseIfInUse(config.db);
  if (config.reset) {
    for (const suffix of ['', '-wal', '-shm']) rmSync(`${config.db}${suffix}`, { force: true });
  }
  if (existsSync(config.db)) return;
  const db = openDatabase(config.db, { busyTimeoutMs: config.busyTimeoutMs });
  migrate(db);
  const started = Date.now();
  process.stdout.write(`Making the demo database ${config.db} (${PLANT.name}, two weeks of hourly checks)…\n`);
  const summary = await generateDemo({ db, config, endAt: Date.now() });
  db.close();
  process.stdout.write(`  ${summary.checks} checks and ${summary.alerts} alerts in ${((Date.now() - started) / 1000).toFixed(1)} s\n`);
}

async function main(): Promise<void> {
  const argv = process.argv.slice(2);
  if (argv.includes('--help') || argv.includes('-h')) {
    process.stdout.write(helpText(argv.includes('--demo') ? 'npm run demo --' : 'npm start --'));
    return;
  }
  let config: Config;
  try {
    const demo = argv.includes('--demo') || process.env.HEFT_DEMO === '1';
    const explicitDb = argv.some((a) => a === '--db' || a.startsWith('--db=')) || process.env.HEFT_DB !== undefined;
    config = parseConfig(argv, process.env, {
      ...(demo && !explicitDb ? { db: './data/demo.db' } : {}),
      ...(demo && process.env.HEFT_PLANT_NAME === undefined ? { plantName: PLANT.name } : {}),
    });
  } catch (err) {
    if (err instanceof ConfigError) {
      process.stderr.write(`${err.message}\n`);
      process.exit(2);
    }
    throw err;
  }
  if (config.demo) await prepareDemo(config);
  try {
    if (await ensureWebBuilt((m) => process.stdout.write(`${m}\n`))) process.stdout.write('  pages built\n');
  } catch (err) {
    process.stderr.write(`the pages could not be built (${err instanceof Error ? err.message : String(err)}); the API still runs\n`);
  }

  refuseIfInUse(config.db);
  const db = openDatabase(config.db, { busyTimeoutMs: config.busyTimeoutMs });
  migrate(db);
  // so that a restore can tell the database is in use
  writePidFile(config.db);
  const live: ((events: LiveEvent[]) => void)[] = [];
  const app = await buildApp({
    db,
    clock: systemClock,
    config,
    logger: { level: config.logLevel },
    overdueTimer: true,
    checkpointThread: true,
    backupTimer: true,
    onLive: (events) => {
      for (const listen of live) listen(events);
    },
  });

  let stopSimulator = () => {};
  if (config.demo && config.simulator) {
    const { token } = app.heft.auth.createToken({ name: `demo simulator ${new Date().toISOString()}`, kind: 'checks', lineIds: app.heft.repos.lines.list().map((l) => l.id) }, 'demo-setup');
    const sim = startSimulator({ app, token });
    live.push(sim.onLive);
    stopSimulator = sim.stop;
  }

  const shutdown = async (signal: string) => {
    app.log.info({ signal }, 'shutting down');
    stopSimulator();
    await app.close();
    db.close();
    removePidFile(config.db);
    process.exit(0);
  };
  process.once('SIGTERM', () => void shutdown('SIGTERM'));
  process.once('SIGINT', () => void shutdown('SIGINT'));

  await app.listen({ port: config.port, host: config.host });
  // the port really bound (--port 0 asks the system for a free one)
  const bound = (app.server.address() as { port: number } | null)?.port ?? config.port;
  const url = `http://${config.host.includes(':') ? `[${config.host}]` : config.host}:${bound}`;
  if (config.demo) {
    process.stdout.write(
      `\nHeft demo at ${url}  (database ${config.db})\nDemo users (demo mode only):\n${DEMO_USERS.map((u) => `  ${u.role.padEnd(10)} ${u.username} / ${u.secret}`).join('\n')}\n` +
        `${config.simulator ? 'A simulated operator keys in a check on each line every ~20 s.\n' : ''}\n`,
    );
  } else {
    // one write, so whoever reads the start-up lines gets them whole
    const noUsers = app.heft.auth.users().length === 0;
    process.stdout.write(
      `Heft at ${url}  (database ${config.db})\n` +
        (noUsers
          ? 'No one can sign in yet: this database has no users. Create the first admin with\n' +
            `  npm run heft -- user add --role admin --username NAME --name "Full name" --db ${config.db}\n` +
            '(it asks for the password twice, or takes it from HEFT_NEW_SECRET), then sign in and add the rest.\n'
          : ''),
    );
  }
}

main().catch((err) => {
  process.stderr.write(`Heft could not start: ${err instanceof Error ? err.message : String(err)}\n`);
  process.exit(1);
});
