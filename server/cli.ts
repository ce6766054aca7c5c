import { parseArgs } from 'node:util';
import { createAuditRepository } from './audit/repository.js';
import { createAuthRepository } from './auth/repository.js';
import { ROLES, type Role } from './auth/secrets.js';
import { createAuthService } from './auth/service.js';
import { EVERY_USER } from './auth/throttle.js';
import { createLineRepository } from './lines/repository.js';
import { systemClock } from './clock.js';
import { openDatabase } from './db/database.js';
import { migrate } from './db/migrate.js';
import { backupDatabase, restoreDatabase } from './db/backup.js';
import { existsSync } from 'node:fs';
import { DomainError } from './errors.js';
import { runScaleBridge } from './scales/bridge-cli.js';

const USAGE = `Usage: npm run heft -- <command> [options]

  user add --username NAME --role ROLE --name "Display name" [--secret S]
  user passwd --username NAME [--secret S]
  user disable --username NAME
  user list
  user locks                                  wrong sign-ins per user and device, and the locks in force
  user unlock [--username NAME] [--address IP]  clear sign-in locks of a user, a device, or both
  token create --name NAME --kind checks|board [--lines 1,2]
  token revoke --id N
  token list
  backup --to FILE                            a verified copy of the database, taken while the server runs
  restore --from FILE                         put a verified backup in the database's place (server stopped)
  scale --server URL --line CODE (--serial PATH | --tcp HOST:PORT) [--token T] [--baud N] [--pattern REGEX] [--packs N]
                                              the scale bridge: a scale's readings posted as checks (scale --help)

  --db FILE    the database (default ./data/heft.db, or HEFT_DB)
  A secret not given with --secret is read from HEFT_NEW_SECRET (or HEFT_SECRET), else asked for
  twice at the terminal without echo, else read from standard input (one line), so it need not
  stand in the shell history.
  Roles: ${ROLES.join(', ')}. Operators and supervisors use a PIN of 4+ digits; quality and admin
  a password of 12+ characters.
`;

/** Reads one line from the terminal without showing what is typed. */
function askHidden(prompt: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const input = process.stdin;
    process.stderr.write(prompt);
    input.setRawMode(true);
    input.resume();
    let typed = '';
    const done = (error?: Error) => {
      input.setRawMode(false);
      input.pause();
      input.off('data', onData);
      process.stderr.write('\n');
      if (error) reject(error);
      else resolve(typed);
    };
    const onData = (chunk: Buffer) => {
      for (const ch of chunk.toString('utf8')) {
        if (ch === '\r' || ch === '\n') return done();
        if (ch === '\u0003') return done(new Error('cancelled'));
        if (ch === '\u007f' || ch === '\b') typed = typed.slice(0, -1);
        else typed += ch;
      }
    };
    input.on('data', onData);
  });
}

async function readSecret(given: string | undefined): Promise<string> {
  if (given) return given;
  const fromEnv = process.env.HEFT_NEW_SECRET ?? process.env.HEFT_SECRET;
  if (fromEnv) return fromEnv;
  if (process.stdin.isTTY) {
    const first = await askHidden('password or PIN: ');
    const again = await askHidden('the same again: ');
    if (first !== again) throw new Error('the two entries differ; nothing was changed');
    if (!first) throw new Error('no secret given');
    return first;
  }
  const chunks: Buffer[] = [];
  for await (const chunk of process.stdin) chunks.push(chunk as Buffer);
  const line = Buffer.concat(chunks).toString('utf8').split(/\r?\n/)[0]?.trim() ?? '';
  if (!line) throw new Error('no secret given (--secret, HEFT_SECRET or standard input)');
  return line;
}

function need(value: string | undefined, flag: string): string {
  if (!value) throw new Error(`${flag} is needed (see --help)`);
  return value;
}

async function main(): Promise<void> {
  // the scale bridge talks to a running server, not to the database: its own options
  if (process.argv[2] === 'scale') return runScaleBridge(process.argv.slice(3));
  const { values, positionals } = parseArgs({
    allowPositionals: true,
    options: {
      db: { type: 'string' },
      username: { type: 'string' },
      role: { type: 'string' },
      name: { type: 'string' },
      secret: { type: 'string' },
      kind: { type: 'string' },
      lines: { type: 'string' },
      id: { type: 'string' },
      address: { type: 'string' },
      to: { type: 'string' },
      from: { type: 'string' },
      help: { type: 'boolean', short: 'h' },
    },
  });
  const [noun, verb] = positionals;
  if (values.help || !noun) {
    process.stdout.write(USAGE);
    return;
  }
  const dbFile = values.db ?? process.env.HEFT_DB ?? './data/heft.db';
  if (noun === 'restore') {
    const report = restoreDatabase(need(values.from, '--from'), dbFile);
    process.stdout.write(`restored ${dbFile} from ${values.from}: ${report.checks} checks, ${report.bytes} bytes; start the server to use it\n`);
    return;
  }
  if (noun === 'backup') {
    if (!existsSync(dbFile)) throw new Error(`no database at ${dbFile}`);
    // its own connection; the server may keep taking checks meanwhile (WAL): one read snapshot is copied
    const source = openDatabase(dbFile);
    try {
      const report = await backupDatabase(source, need(values.to, '--to'), 'all');
      process.stdout.write(`backup ${report.file}: ${report.checks} checks, ${report.bytes} bytes, integrity ok\n`);
    } finally {
      source.close();
    }
    return;
  }
  const db = openDatabase(dbFile);
  migrate(db);
  const repo = createAuthRepository(db);
  const auth = createAuthService({ db, clock: systemClock, repo, audit: createAuditRepository(db), sessionIdleMs: 0, sessionMaxMs: 0 });
  const by = `cli:${process.env.USER ?? 'unknown'}`;
  try {
    if (noun === 'user' && verb === 'add') {
      const role = need(values.role, '--role') as Role;
      if (!ROLES.includes(role)) throw new Error(`--role must be one of ${ROLES.join(', ')}`);
      const username = need(values.username, '--username');
      const user = await auth.addUser({ username, role, displayName: values.name ?? username, secret: await readSecret(values.secret) }, by);
      process.stdout.write(`added ${user.username} (${user.role})\n`);
    } else if (noun === 'user' && verb === 'passwd') {
      const user = await auth.setSecret(need(values.username, '--username'), await readSecret(values.secret), by);
      process.stdout.write(`new secret set for ${user.username}; their sessions were ended\n`);
    } else if (noun === 'user' && verb === 'disable') {
      const user = repo.userByName(need(values.username, '--username'));
      if (!user) throw new Error(`no user ${values.username}`);
      auth.updateUser(user.id, { disabled: true }, by);
      process.stdout.write(`disabled ${user.username}\n`);
    } else if (noun === 'user' && verb === 'list') {
      for (const u of auth.users()) process.stdout.write(`${u.username}\t${u.role}\t${u.disabled ? 'disabled' : 'active'}\t${u.displayName}\n`);
    } else if (noun === 'user' && verb === 'locks') {
      for (const l of auth.signInLocks()) {
        const who = l.username === EVERY_USER ? '(every user)' : l.username;
        process.stdout.write(`${who}\t${l.address}\t${l.failures} failures\t${l.locked ? `locked until ${new Date(l.lockedUntil as number).toISOString()}` : 'not locked'}\n`);
      }
    } else if (noun === 'user' && verb === 'unlock') {
      const cleared = auth.clearSignInLocks({ username: values.username, address: values.address }, by);
      process.stdout.write(`cleared ${cleared} failure count${cleared === 1 ? '' : 's'}\n`);
    } else if (noun === 'token' && verb === 'create') {
      const kind = need(values.kind, '--kind');
      if (kind !== 'checks' && kind !== 'board') throw new Error('--kind must be checks or board');
      const lineIds = (values.lines ?? '').split(',').filter(Boolean).map(Number);
      if (lineIds.some((n) => !Number.isInteger(n) || n <= 0)) throw new Error('--lines takes line ids like 1,2');
      if (kind === 'checks' && lineIds.length === 0) throw new Error('a checks token needs --lines');
      const lines = createLineRepository(db);
      for (const id of lineIds) if (!lines.get(id)) throw new Error(`there is no line ${id}`);
      const { token, record } = auth.createToken({ name: need(values.name, '--name'), kind, lineIds }, by);
      process.stdout.write(`token ${record.id} (${record.kind}, lines ${record.lineIds.join(',') || 'none'}):\n${token}\nIt is shown once; only its hash is kept.\n`);
      if (kind === 'board') process.stdout.write(`Open this link once on the wall screen's browser: http://<heft-host>:<port>/board?token=${encodeURIComponent(token)}\n`);
    } else if (noun === 'token' && verb === 'revoke') {
      const token = auth.revokeToken(Number(need(values.id, '--id')), by);
      process.stdout.write(`revoked token ${token.id} (${token.name})\n`);
    } else if (noun === 'token' && verb === 'list') {
      for (const t of auth.tokens()) process.stdout.write(`${t.id}\t${t.kind}\t${t.revokedAt ? 'revoked' : 'active'}\tlines ${t.lineIds.join(',')}\t${t.name}\n`);
    } else {
      throw new Error(`unknown command "${positionals.join(' ')}" (see --help)`);
    }
  } finally {
    db.close();
  }
}

main().catch((err) => {
  process.stderr.write(`heft: ${err instanceof DomainError || err instanceof Error ? err.message : String(err)}\n`);
  process.exit(1);
});
