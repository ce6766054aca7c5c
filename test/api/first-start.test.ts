import { execFileSync, spawn } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { expect, test } from 'vitest';
import { BUILT_CLI, BUILT_SERVER } from '../build-server.js';
import { removeDir } from '../helpers.js';

/** Starts the built server on a fresh database and port; resolves with what it printed once it listens. */
function start(file: string): Promise<{ out: string; url: string; stop: () => Promise<void> }> {
  const child = spawn(process.execPath, [BUILT_SERVER, '--db', file, '--port', '0', '--log-level', 'warn'], { stdio: ['ignore', 'pipe', 'pipe'] });
  let out = '';
  const exited = new Promise<void>((r) => child.once('exit', () => r()));
  const stop = async () => {
    child.kill('SIGTERM');
    await exited;
  };
  return new Promise((resolve, reject) => {
    const onData = (d: Buffer) => {
      out += d.toString();
      // the start-up lines come in one write, the advice (when due) with them
      const url = /Heft at (http:\/\/\S+)/.exec(out)?.[1];
      if (url) resolve({ out, url, stop });
    };
    child.stdout.on('data', onData);
    child.stderr.on('data', (d: Buffer) => (out += d.toString()));
    child.once('exit', (code) => reject(new Error(`server exited ${code}: ${out}`)));
  });
}

test('when the server first starts on a new database, then it says how to make the first admin, and the admin the CLI makes can sign in', async () => {
  const dir = mkdtempSync(join(tmpdir(), 'heft-first-'));
  const file = join(dir, 'heft.db');
  try {
    const first = await start(file);
    expect(first.out).toMatch(/no users\. Create the first admin with\n {2}npm run heft -- user add --role admin/);
    expect(first.out).not.toMatch(/deprecat|warning/i);
    // no default users outside demo mode
    const nobody = await fetch(`${first.url}/api/session`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ username: 'admin', secret: 'admin' }) });
    expect(nobody.status).toBe(401);
    // a second server on the same database is refused: each would judge checks on its own memory of the lines
    const second = await start(file).then(
      async (s) => {
        await s.stop();
        return 'started';
      },
      (err: Error) => err.message,
    );
    expect(second).toMatch(/Heft could not start: another Heft server \(process \d+\) has .*heft\.db open/);
    await first.stop();

    const added = execFileSync(process.execPath, [BUILT_CLI, 'user', 'add', '--role', 'admin', '--username', 'ria.admin', '--name', 'Ria Admin', '--db', file], {
      encoding: 'utf8',
      env: { ...process.env, HEFT_NEW_SECRET: 'a long first secret' },
    });
    expect(added).toContain('added ria.admin (admin)');

    const again = await start(file);
    expect(again.out).not.toContain('No one can sign in');
    const signIn = await fetch(`${again.url}/api/session`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ username: 'ria.admin', secret: 'a long first secret' }) });
    expect(signIn.status).toBe(200);
    expect((await signIn.json()).user).toEqual({ username: 'ria.admin', displayName: 'Ria Admin', role: 'admin' });
    await again.stop();
  } finally {
    removeDir(dir);
  }
});
