import { QueryTypes } from 'sequelize';
import { startTestApp, csrf, testPassword, type TestApp } from '../helpers/app';
import { linkOf, waitForMail } from '../helpers/mailbox';
import { Activity, User } from '../../server/db/models';

let t: TestApp;
let clock = new Date();
let morgan: ReturnType<TestApp['agent']>;

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', now: () => clock });
  morgan = t.agent();
  const res = await morgan.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword });
  expect(res.status).toBe(200);
});
afterAll(() => t.close());

const newPassword = 'aldmere vale at dusk';
const unique = (name: string) => `${name}.${Date.now().toString(36)}${Math.floor(Math.random() * 1e6)}@fernhollow.example`;

async function invite(email: string, role = 'integrator') {
  const since = new Date();
  const res = await morgan.post('/api/team/invitations').set(csrf).send({ email, role });
  expect(res.status).toBe(201);
  const mail = await waitForMail(email, 'invited you to Heliodor', since);
  return { res, mail, ...linkOf(mail) };
}

async function lastActivity(action: string, targetId: string) {
  return Activity.findOne({ where: { action, targetId }, order: [['id', 'DESC']] });
}

describe('invitations', () => {
  test('when the admin invites an address, then the person is listed as invited, the mail leads with a one-time link, and opening it lets them join signed in', async () => {
    const email = unique('ines');
    const { res, mail, link, token } = await invite(email);
    expect(res.body.mailed).toBe(true);
    expect(res.body.member).toMatchObject({ email, role: 'integrator', status: 'invited', secondFactor: false, lastSignInAt: null, invitedBy: { name: 'Morgan' } });
    // Valid 72 hours from now.
    expect(Date.parse(res.body.member.invitationExpiresAt) - clock.getTime()).toBe(72 * 3600 * 1000);
    expect(link).toMatch(/\/invitation#t=hiv_[A-Za-z0-9_-]{43}$/);
    expect(mail.html).toContain(link.replace(/&/g, '&amp;'));
    // Only the digest is kept.
    const rows = await t.sequelize.query<{ token_digest: string }>('SELECT token_digest FROM one_time_links', { type: QueryTypes.SELECT });
    expect(rows.some((r) => r.token_digest.includes(token))).toBe(false);

    const invitee = t.agent();
    const seen = await invitee.post('/api/invitations/lookup').send({ token });
    expect(seen.status).toBe(200);
    expect(seen.body).toMatchObject({ email, role: 'integrator', invitedBy: 'Morgan' });
    const joined = await invitee.post('/api/invitations/accept').send({ token, name: 'Ines', password: newPassword });
    expect(joined.status).toBe(201);
    expect(joined.body.user).toMatchObject({ email, name: 'Ines', role: 'integrator' });
    const me = await invitee.get('/api/auth/me');
    expect(me.status).toBe(200);
    expect((await invitee.get('/api/team')).status).toBe(403);

    const list = await morgan.get('/api/team');
    const row = list.body.rows.find((r: { email: string }) => r.email === email);
    expect(row).toMatchObject({ name: 'Ines', status: 'active', invitationExpiresAt: null });
    expect(row.lastSignInAt).not.toBeNull();

    // Single use.
    const again = await t.request().post('/api/invitations/accept').send({ token, name: 'Someone', password: 'another long passphrase' });
    expect(again.status).toBe(410);
    expect(again.headers['content-type']).toMatch(/problem\+json/);

    const invited = await lastActivity('person.invited', row.id);
    expect(invited?.summary).toBe(`Morgan invited ${email} to join as an integrator`);
    const joinedRow = await lastActivity('person.joined', row.id);
    expect(joinedRow?.summary).toBe(`Ines (${email}) joined the team as an integrator, invited by Morgan`);
    expect(joinedRow?.actorName).toBe('Ines');
  });

  test('when the address is already on the team or already invited, then the invitation is a 409 problem saying what to do instead', async () => {
    const onTeam = await morgan.post('/api/team/invitations').set(csrf).send({ email: 'Tomasz@Fernhollow.Example', role: 'support' });
    expect(onTeam.status).toBe(409);
    expect(onTeam.headers['content-type']).toMatch(/problem\+json/);
    expect(onTeam.body.detail).toContain('already on the team');
    const email = unique('olu');
    await invite(email);
    const twice = await morgan.post('/api/team/invitations').set(csrf).send({ email, role: 'support' });
    expect(twice.status).toBe(409);
    expect(twice.body.detail).toContain('Resend');
  });

  test('when 72 hours have passed, then the link no longer works; a resent link works and the earlier one does not', async () => {
    const email = unique('keld');
    const { res, token } = await invite(email, 'support');
    const started = clock;
    try {
      clock = new Date(started.getTime() + 72 * 3600 * 1000 + 1000);
      expect((await t.request().post('/api/invitations/lookup').send({ token })).status).toBe(410);
      // Morgan's own session (12 hours) ended meanwhile too.
      expect((await morgan.get('/api/team')).status).toBe(401);
      await morgan.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword });
      const since = new Date();
      const resent = await morgan.post(`/api/team/${res.body.member.id}/invitation`).set(csrf).send({});
      expect(resent.status).toBe(200);
      const fresh = linkOf(await waitForMail(email, 'invited you', since)).token;
      expect(fresh).not.toBe(token);
      expect((await t.request().post('/api/invitations/lookup').send({ token })).status).toBe(410);
      expect((await t.request().post('/api/invitations/lookup').send({ token: fresh })).status).toBe(200);
      expect((await lastActivity('person.invitation_resent', res.body.member.id))?.summary).toBe(`Morgan sent ${email} a new invitation link; the earlier one no longer works`);
    } finally {
      clock = started;
    }
  });

  test('when an invitation is revoked, then the person leaves the list, the link stops working and the address can be invited again', async () => {
    const email = unique('rhiannon');
    const { res, token } = await invite(email);
    const id = res.body.member.id;
    expect((await morgan.delete(`/api/team/${id}/invitation`).set(csrf)).status).toBe(204);
    expect((await morgan.get('/api/team')).body.rows.some((r: { id: string }) => r.id === id)).toBe(false);
    expect((await t.request().post('/api/invitations/lookup').send({ token })).status).toBe(410);
    expect((await lastActivity('person.invitation_revoked', id))?.summary).toBe(`Morgan revoked the invitation of ${email}`);
    await invite(email);
  });

  test('when the invitee picks a common or short password, then joining is refused naming the field (OWASP ASVS 4.0 §2.1.1, §2.1.7)', async () => {
    const { token } = await invite(unique('piet'));
    const common = await t.request().post('/api/invitations/accept').send({ token, name: 'Piet', password: 'qwerty123456' });
    expect(common.status).toBe(400);
    expect(common.body.errors).toEqual([expect.objectContaining({ path: 'password' })]);
    const short = await t.request().post('/api/invitations/accept').send({ token, name: 'Piet', password: 'short' });
    expect(short.status).toBe(400);
    expect((await t.request().post('/api/invitations/lookup').send({ token })).status).toBe(200); // still usable
  });
});

describe('roles and disabling', () => {
  test('when an integrator\'s role changes and changes back, then their session ends at its next request and their site assignments stay', async () => {
    const ade = t.agent();
    expect((await ade.post('/api/auth/sign-in').send({ email: 'ade@fernhollow.example', password: testPassword })).status).toBe(200);
    const adeId = (await ade.get('/api/auth/me')).body.id;
    const sitesBefore = await t.sequelize.query<{ site_id: string }>('SELECT site_id FROM site_integrators WHERE user_id = :adeId ORDER BY site_id', { type: QueryTypes.SELECT, replacements: { adeId } });
    expect(sitesBefore.length).toBeGreaterThan(0);

    const toSupport = await morgan.patch(`/api/team/${adeId}`).set(csrf).send({ role: 'support' });
    expect(toSupport.status).toBe(200);
    expect(toSupport.body).toMatchObject({ role: 'support', status: 'active' });
    expect((await ade.get('/api/auth/me')).status).toBe(401);
    expect((await lastActivity('person.role_changed', adeId))?.summary).toBe("Morgan changed Ade's role from integrator to support; they were signed out");

    expect((await morgan.patch(`/api/team/${adeId}`).set(csrf).send({ role: 'integrator' })).status).toBe(200);
    const sitesAfter = await t.sequelize.query<{ site_id: string }>('SELECT site_id FROM site_integrators WHERE user_id = :adeId ORDER BY site_id', { type: QueryTypes.SELECT, replacements: { adeId } });
    expect(sitesAfter).toEqual(sitesBefore);
    const again = t.agent();
    expect((await again.post('/api/auth/sign-in').send({ email: 'ade@fernhollow.example', password: testPassword })).status).toBe(200);
    expect((await again.get('/api/sites')).body.total).toBe(sitesBefore.length);
  });

  test('when a person is disabled, then their open session ends, they cannot sign in, and they stay the author of what they did; enabling lets them back', async () => {
    const lena = t.agent();
    expect((await lena.post('/api/auth/sign-in').send({ email: 'lena@fernhollow.example', password: testPassword })).status).toBe(200);
    const lenaId = (await lena.get('/api/auth/me')).body.id;
    const authored = await Activity.count({ where: { actorId: lenaId } });
    expect(authored).toBeGreaterThan(0);

    const off = await morgan.patch(`/api/team/${lenaId}`).set(csrf).send({ disabled: true });
    expect(off.status).toBe(200);
    expect(off.body.status).toBe('disabled');
    const next = await lena.get('/api/overview');
    expect(next.status).toBe(401);
    expect(next.headers['content-type']).toMatch(/problem\+json/);
    expect((await t.request().post('/api/auth/sign-in').send({ email: 'lena@fernhollow.example', password: testPassword })).status).toBe(401);
    expect(await Activity.count({ where: { actorId: lenaId } })).toBe(authored);
    expect(await User.findByPk(lenaId)).not.toBeNull();
    expect((await morgan.get('/api/users')).body.rows.some((u: { id: string }) => u.id === lenaId)).toBe(false);
    expect((await lastActivity('person.disabled', lenaId))?.summary).toBe('Morgan disabled Lena: they can no longer sign in and were signed out');

    expect((await morgan.patch(`/api/team/${lenaId}`).set(csrf).send({ disabled: false })).body.status).toBe('active');
    expect((await lastActivity('person.enabled', lenaId))?.summary).toBe('Morgan enabled Lena again as support');
    expect((await t.request().post('/api/auth/sign-in').send({ email: 'lena@fernhollow.example', password: testPassword })).status).toBe(200);
  });

  test('when a change would leave no active admin, then it is a 409 problem naming the rule, and nothing changes', async () => {
    const morganId = (await morgan.get('/api/auth/me')).body.id;
    // An invited admin is not yet an active admin.
    await invite(unique('second.admin'), 'admin');
    for (const change of [{ role: 'support' }, { disabled: true }]) {
      const res = await morgan.patch(`/api/team/${morganId}`).set(csrf).send(change);
      expect(res.status).toBe(409);
      expect(res.headers['content-type']).toMatch(/problem\+json/);
      expect(res.body).toMatchObject({ title: 'The team needs an admin', rule: 'at-least-one-active-admin' });
      expect(res.body.detail).toContain('without an active admin');
    }
    expect((await User.findByPk(morganId))?.role).toBe('admin');
    expect((await morgan.get('/api/auth/me')).status).toBe(200);

    // With Priya an admin too, Morgan may step down (and is signed out by the change).
    const priya = await User.findOne({ where: { email: 'priya@fernhollow.example' } });
    expect((await morgan.patch(`/api/team/${priya!.id}`).set(csrf).send({ role: 'admin' })).status).toBe(200);
    const down = await morgan.patch(`/api/team/${morganId}`).set(csrf).send({ role: 'release_engineer' });
    expect(down.status).toBe(200);
    expect((await morgan.get('/api/auth/me')).status).toBe(401);
    // Restore for the other tests.
    const priyaAgent = t.agent();
    await priyaAgent.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    expect((await priyaAgent.patch(`/api/team/${morganId}`).set(csrf).send({ role: 'admin' })).status).toBe(200);
    expect((await priyaAgent.patch(`/api/team/${priya!.id}`).set(csrf).send({ role: 'release_engineer' })).status).toBe(200);
    await morgan.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword });
  });

  test('when the body names neither a role nor disabled, or the person does not exist, then 400 / 404 problems', async () => {
    const id = (await User.findOne({ where: { email: 'tomasz@fernhollow.example' } }))!.id;
    const empty = await morgan.patch(`/api/team/${id}`).set(csrf).send({});
    expect(empty.status).toBe(400);
    expect(empty.body.errors[0].path).toBe('role');
    expect((await morgan.patch(`/api/team/${id}`).set(csrf).send({ role: 'owner' })).status).toBe(400);
    expect((await morgan.patch('/api/team/00000000-0000-4000-8000-000000000000').set(csrf).send({ role: 'support' })).status).toBe(404);
  });
});
