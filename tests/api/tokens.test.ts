// API tokens for automation. The stored digest is checked against node:crypto's SHA-256
// of the token text; the token shape (hat_ + 43 base64url characters = 32 random bytes, RFC 4648 §5).
import crypto from 'node:crypto';
import request from 'supertest';
import { QueryTypes } from 'sequelize';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, ApiToken } from '../../server/db/models';

let clock = new Date('2026-12-01T10:00:00.000Z');
let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'none', now: () => clock });
});
afterAll(() => t.close());

const inDays = (days: number) => new Date(clock.getTime() + days * 86_400_000).toISOString();

async function create(scopes: string[], name = 'CI pipeline') {
  const admin = await t.signedIn('admin', 'Token Admin');
  const res = await admin.post('/api/tokens').set(csrf).send({ name, scopes, expiresAt: inDays(30) });
  if (res.status !== 201) throw new Error(`${res.status} ${JSON.stringify(res.body)}`);
  return res.body as { id: string; token: string; name: string; scopes: string[]; expiresAt: string };
}

const bearer = (token: string) => ({ Authorization: `Bearer ${token}` });

describe('creating and listing tokens', () => {
  test('when an admin creates a token, then it is shown once as hat_ + 43 base64url characters and stored only as its SHA-256', async () => {
    const created = await create(['images:write']);
    expect(created.token).toMatch(/^hat_[A-Za-z0-9_-]{43}$/);
    expect(Buffer.from(created.token.slice(4), 'base64url')).toHaveLength(32);
    expect(created).toMatchObject({ name: 'CI pipeline', scopes: ['images:write'], expiresAt: inDays(30) });
    const row = await ApiToken.findByPk(created.id);
    expect(row?.tokenDigest).toBe(crypto.createHash('sha256').update(created.token).digest('hex'));
    const [raw] = await t.sequelize.query<Record<string, unknown>>('SELECT * FROM api_tokens WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: created.id } });
    expect(JSON.stringify(raw)).not.toContain(created.token.slice(4));

    const list = await (await t.signedIn('admin', 'Token Admin')).get('/api/tokens');
    expect(list.status).toBe(200);
    const listed = list.body.rows.find((r: { id: string }) => r.id === created.id);
    expect(listed).toMatchObject({ name: 'CI pipeline', scopes: ['images:write'], lastUsedAt: null, revokedAt: null, createdBy: { name: 'Token Admin' } });
    expect(JSON.stringify(list.body)).not.toContain(created.token);
    expect(JSON.stringify(list.body)).not.toContain(row!.tokenDigest);
    expect(await Activity.count({ where: { action: 'token.created', targetId: created.id } })).toBe(1);
  });

  test('when the expiry is past, a scope unknown or the name blank, then 400 names each field', async () => {
    const admin = await t.signedIn('admin', 'Token Admin');
    const past = await admin.post('/api/tokens').set(csrf).send({ name: 'Old', scopes: ['fleet:read'], expiresAt: inDays(-1) });
    expect(past.status).toBe(400);
    expect(past.body.errors[0].path).toBe('expiresAt');
    const bad = await admin.post('/api/tokens').set(csrf).send({ name: ' ', scopes: ['everything'], expiresAt: 'tomorrow' });
    expect(bad.status).toBe(400);
    expect(bad.body.errors.map((e: { path: string }) => e.path).sort()).toEqual(['expiresAt', 'name', 'scopes.0']);
    const none = await admin.post('/api/tokens').set(csrf).send({ name: 'Empty', scopes: [], expiresAt: inDays(1) });
    expect(none.body.errors[0].path).toBe('scopes');
  });

  test('when a release engineer asks for tokens, then 403', async () => {
    const engineer = await t.signedIn('release_engineer');
    expect((await engineer.get('/api/tokens')).status).toBe(403);
    expect((await engineer.post('/api/tokens').set(csrf).send({ name: 'x', scopes: ['fleet:read'], expiresAt: inDays(1) })).status).toBe(403);
  });
});

describe('using tokens', () => {
  test('when a token calls a route outside its scopes, then 403 (it was recognised), and an unknown token gets 401', async () => {
    const created = await create(['fleet:read']);
    expect((await request(t.app).get('/api/keys').set(bearer(created.token))).status).toBe(403);
    expect((await request(t.app).get('/api/tokens').set(bearer(created.token))).status).toBe(403);
    const unknown = `hat_${crypto.randomBytes(32).toString('base64url')}`;
    const res = await request(t.app).get('/api/keys').set(bearer(unknown));
    expect(res.status).toBe(401);
    expect(res.headers['www-authenticate']).toBe('Bearer');
    expect((await request(t.app).get('/api/keys').set(bearer('hat_short'))).status).toBe(401);
  });

  test('when a token is used, then its last use is recorded at most once a minute', async () => {
    const created = await create(['fleet:read'], 'Dashboard');
    await request(t.app).get('/api/keys').set(bearer(created.token));
    const first = (await ApiToken.findByPk(created.id))!.lastUsedAt;
    expect(first?.toISOString()).toBe(clock.toISOString());
    clock = new Date(clock.getTime() + 30_000);
    await request(t.app).get('/api/keys').set(bearer(created.token));
    expect((await ApiToken.findByPk(created.id))!.lastUsedAt?.toISOString()).toBe(first?.toISOString());
    clock = new Date(clock.getTime() + 31_000);
    await request(t.app).get('/api/keys').set(bearer(created.token));
    expect((await ApiToken.findByPk(created.id))!.lastUsedAt?.toISOString()).toBe(clock.toISOString());
  });

  test('when a token is revoked, then it answers 401, the row is kept, and revoking is recorded', async () => {
    const created = await create(['fleet:read'], 'Old pipeline');
    expect((await request(t.app).get('/api/keys').set(bearer(created.token))).status).toBe(403);
    const admin = await t.signedIn('admin', 'Token Admin');
    expect((await admin.delete(`/api/tokens/${created.id}`).set(csrf)).status).toBe(204);
    expect((await request(t.app).get('/api/keys').set(bearer(created.token))).status).toBe(401);
    expect((await ApiToken.findByPk(created.id))?.revokedAt?.toISOString()).toBe(clock.toISOString());
    expect(await Activity.count({ where: { action: 'token.revoked', targetId: created.id } })).toBe(1);
    const listed = (await admin.get('/api/tokens')).body.rows.find((row: { id: string }) => row.id === created.id);
    expect(listed.can).toEqual({ revoke: false });
    expect((await admin.delete(`/api/tokens/${crypto.randomUUID()}`).set(csrf)).status).toBe(404);
  });

  test('when a token has expired, then it answers 401', async () => {
    const created = await create(['fleet:read'], 'Short lived');
    expect((await request(t.app).get('/api/keys').set(bearer(created.token))).status).toBe(403);
    const saved = clock;
    clock = new Date(clock.getTime() + 31 * 86_400_000);
    expect((await request(t.app).get('/api/keys').set(bearer(created.token))).status).toBe(401);
    clock = saved;
  });
});
