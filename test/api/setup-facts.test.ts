import { describe, expect } from 'vitest';
import { heftTest, setupLine, weightsWithMean } from '../helpers.js';

/** What the set-up page's People and Machine tokens lists show beside each row (issue 12). */
describe('last sign-in and last use', () => {
  heftTest('when a person signs in, then the user list gives that time as the last sign-in, and a person who never signed in has none', async ({ heft: t }) => {
    await t.app.heft.auth.addUser({ username: 'nadia', displayName: 'Nadia', role: 'operator', secret: '4826' }, 'test');
    const listed = async () => (await t.app.inject({ method: 'GET', url: '/api/users', headers: { cookie: t.cookies.admin } })).json().users as { username: string; lastSignInAt: string | null }[];
    expect((await listed()).find((u) => u.username === 'nadia')?.lastSignInAt).toBeNull();
    t.clock.advance(3_600_000);
    const at = new Date(t.clock.now()).toISOString();
    expect((await t.app.inject({ method: 'POST', url: '/api/session', payload: { username: 'nadia', secret: '4826' } })).statusCode).toBe(200);
    expect((await listed()).find((u) => u.username === 'nadia')?.lastSignInAt).toBe(at);
    // the operator of the test set-up signed in at the start, an hour before
    expect((await listed()).find((u) => u.username === 'operator')?.lastSignInAt).toBe(new Date(t.clock.now() - 3_600_000).toISOString());
  });

  heftTest('when a checks token posts, then its last use is that time, kept to the minute without a write for every check', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const made = t.app.heft.auth.createToken({ name: 'scale L1', kind: 'checks', lineIds: [lineId] }, 'test');
    const tokens = async () => (await t.app.inject({ method: 'GET', url: '/api/tokens', headers: { cookie: t.cookies.admin } })).json().tokens as { name: string; lastUsedAt: string | null }[];
    expect((await tokens())[0]?.lastUsedAt).toBeNull();
    const first = t.clock.now();
    const post = () => t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/checks`, headers: { authorization: `Bearer ${made.token}` }, payload: { weights: weightsWithMean(503), clientId: crypto.randomUUID() } });
    expect((await post()).statusCode).toBe(201);
    expect((await tokens())[0]?.lastUsedAt).toBe(new Date(first).toISOString());
    t.clock.advance(30_000);
    expect((await post()).statusCode).toBe(201);
    expect((await tokens())[0]?.lastUsedAt).toBe(new Date(first).toISOString());
    t.clock.advance(31_000);
    expect((await post()).statusCode).toBe(201);
    expect((await tokens())[0]?.lastUsedAt).toBe(new Date(first + 61_000).toISOString());
  });

  heftTest('when the admin renames a line, then the list has the new name, the audit trail has the old and new, and a supervisor may not', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const rename = (cookie: string, name: string) => t.app.inject({ method: 'PATCH', url: `/api/lines/${lineId}`, headers: { cookie }, payload: { name } });
    expect((await rename(t.cookies.supervisor, 'Oats bagger')).statusCode).toBe(403);
    expect((await rename(t.cookies.admin, '')).json().issues?.[0]?.field).toBe('name');
    expect((await rename(t.cookies.admin, 'Oats bagger')).statusCode).toBe(200);
    const lines = (await t.app.inject({ method: 'GET', url: '/api/lines', headers: { cookie: t.cookies.operator } })).json().lines as { id: number; name: string }[];
    expect(lines.find((l) => l.id === lineId)?.name).toBe('Oats bagger');
    const audit = (await t.app.inject({ method: 'GET', url: '/api/audit?entity=line', headers: { cookie: t.cookies.admin } })).json().entries as { action: string; before: { name?: string } | null; after: { name?: string } | null }[];
    const renamed = audit.find((e) => e.after?.name === 'Oats bagger');
    expect(renamed?.before?.name).toBe('Line L1');
  });
});
