// Notes on a site read back: GET /api/sites/:id/notes, newest first, keyset-paged by an
// opaque cursor, for everyone who may see the site (integrators only their assigned sites, as
// GET /api/sites/:id decides).
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { demoAgent, siteIdNamed } from './registry-helpers';

let clock = new Date('2026-06-21T09:00:00Z');
let t: TestApp;
type Agent = Awaited<ReturnType<TestApp['signedIn']>>;
let support: Agent;
let siteId: string;
type NoteBody = { id: string; targetType: string; targetId: string; text: string; authorName: string; createdAt: string };

const minuteLater = () => (clock = new Date(clock.getTime() + 60_000));

// The three notes of the first test, oldest first; the last one carries markup and both kinds of quote,
// which JSON (RFC 8259 §7) carries as they are: only the double quote and the backslash are escaped.
const texts = [
  'Key for the hut is at the village shop.',
  'Scaffolding shades the east array until Friday.',
  'Caretaker says: "leave it" — <script>alert(\'x\')</script> & back\\slash',
];

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', now: () => clock });
  siteId = await siteIdNamed('Brackenford Pump House');
  support = await t.signedIn('support', 'Lena Support');
});
afterAll(() => t.close());

describe('reading a site’s notes', () => {
  test('when support adds three notes, then they read back newest first with author and time, and the text exactly as written', async () => {
    const empty = await support.get(`/api/sites/${siteId}/notes`);
    expect(empty.status).toBe(200);
    expect(empty.body).toEqual({ rows: [], total: 0 });

    const added: NoteBody[] = [];
    for (const text of texts) {
      minuteLater();
      const res = await support.post(`/api/sites/${siteId}/notes`).set(csrf).send({ text });
      expect(res.status).toBe(201);
      added.push(res.body);
    }

    const res = await support.get(`/api/sites/${siteId}/notes`);
    expect(res.status).toBe(200);
    expect(res.body.total).toBe(3);
    expect(res.body.nextCursor).toBeUndefined();
    expect(res.body.rows).toEqual([...added].reverse());
    expect(res.body.rows.map((n: NoteBody) => n.text)).toEqual([...texts].reverse());
    expect(res.body.rows[0]).toMatchObject({ targetType: 'site', targetId: siteId, authorName: 'Lena Support', createdAt: clock.toISOString() });
    // node's JSON.stringify as the reference serializer: the markup arrives unescaped (no \u003c), as typed.
    expect(res.text).toContain(JSON.stringify(texts[2]));
    expect(res.text).toContain('<script>');
  });

  test('when the notes are read two at a time, then the cursor walks to the end: every note once, newest first, the total steady', async () => {
    const seen: NoteBody[] = [];
    let cursor: string | undefined;
    let pages = 0;
    do {
      const res = await support.get(`/api/sites/${siteId}/notes`).query({ limit: 2, ...(cursor ? { cursor } : {}) });
      expect(res.status).toBe(200);
      expect(res.body.total).toBe(3);
      expect(res.body.rows.length).toBeLessThanOrEqual(2);
      seen.push(...res.body.rows);
      cursor = res.body.nextCursor;
      pages++;
    } while (cursor && pages < 10);
    expect(pages).toBe(2);
    expect(new Set(seen.map((n) => n.id)).size).toBe(3);
    expect(seen.map((n) => n.text)).toEqual([...texts].reverse());
  });

  test('when several notes share one instant, then the id breaks the tie and paging still gives each note once', async () => {
    const other = await siteIdNamed('Hollins Dairy');
    minuteLater();
    const ids: string[] = [];
    for (let i = 0; i < 5; i++) ids.push((await support.post(`/api/sites/${other}/notes`).set(csrf).send({ text: `Same-minute note ${i + 1}` })).body.id);
    const seen: string[] = [];
    let cursor: string | undefined;
    let pages = 0;
    do {
      const res = await support.get(`/api/sites/${other}/notes`).query({ limit: 2, ...(cursor ? { cursor } : {}) });
      expect(res.status).toBe(200);
      expect(res.body.total).toBe(5);
      seen.push(...res.body.rows.map((n: NoteBody) => n.id));
      cursor = res.body.nextCursor;
      pages++;
    } while (cursor && pages < 10);
    expect(pages).toBe(3);
    expect([...seen].sort()).toEqual([...ids].sort());
    // Ties come in descending id order (the index's order); PostgreSQL compares uuids byte by byte, the
    // order of their lowercase hex text (uuid_cmp is a memcmp of the 16 bytes; from memory).
    expect(seen).toEqual([...ids].sort().reverse());
  });

  test('when a note is added after a page was read, then the next page neither repeats nor skips a note', async () => {
    const first = await support.get(`/api/sites/${siteId}/notes`).query({ limit: 2 });
    minuteLater();
    expect((await support.post(`/api/sites/${siteId}/notes`).set(csrf).send({ text: 'Fuse replaced on the inverter side.' })).status).toBe(201);
    const second = await support.get(`/api/sites/${siteId}/notes`).query({ limit: 2, cursor: first.body.nextCursor });
    expect(second.status).toBe(200);
    expect(second.body.total).toBe(4);
    expect(second.body.rows.map((n: NoteBody) => n.text)).toEqual([texts[0]]);
    expect(second.body.nextCursor).toBeUndefined();
  });
});

describe('refusals', () => {
  test('when the cursor is not one the list gave, then 400 problem+json pointing at cursor', async () => {
    const forged = [
      'not a cursor',
      Buffer.from('["yesterday","x"]').toString('base64url'),
      Buffer.from('{"at":"2026-06-21 09:01:00+00"}').toString('base64url'),
      Buffer.from('["2026-06-21 09:01:00+00","not-a-uuid"]').toString('base64url'),
      // 30 February is no calendar day (ISO 8601 / the Gregorian calendar); PostgreSQL would refuse it.
      Buffer.from('["2026-02-30 09:01:00+00","3f1c2a5e-8b7d-4c1e-9a0f-2d6b8e4c7a10"]').toString('base64url'),
    ];
    for (const cursor of forged) {
      const res = await support.get(`/api/sites/${siteId}/notes`).query({ cursor });
      expect(res.status).toBe(400);
      // RFC 9457 §3: problem details travel as application/problem+json.
      expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
      expect(res.body.errors).toEqual([expect.objectContaining({ path: 'cursor' })]);
    }
  });

  test('when the limit is outside 1–100 or not a whole number, then 400 pointing at limit', async () => {
    for (const limit of ['0', '101', '2.5', 'ten']) {
      const res = await support.get(`/api/sites/${siteId}/notes`).query({ limit });
      expect(res.status).toBe(400);
      expect(res.body.errors[0].path).toBe('limit');
    }
    expect((await support.get(`/api/sites/${siteId}/notes`).query({ limit: '100' })).status).toBe(200);
  });

  test('when the site does not exist, then 404 problem; when the id is not a uuid, then 400', async () => {
    const res = await support.get('/api/sites/00000000-0000-4000-8000-000000000000/notes');
    expect(res.status).toBe(404);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect((await support.get('/api/sites/brackenford/notes')).status).toBe(400);
  });

  test('when an integrator asks, then the notes of their own sites only, refused as GET /api/sites/:id refuses', async () => {
    const ade = await demoAgent(t, 'Ade'); // assigned to Brackenford Pump House in the demo scenario
    const own = await ade.agent.get(`/api/sites/${siteId}/notes`);
    expect(own.status).toBe(200);
    expect(own.body.total).toBe(4);
    const tomasz = await demoAgent(t, 'Tomasz'); // not assigned to it
    const notes = await tomasz.agent.get(`/api/sites/${siteId}/notes`);
    const site = await tomasz.agent.get(`/api/sites/${siteId}`);
    expect(notes.status).toBe(403);
    expect(notes.status).toBe(site.status);
    expect(notes.body.rows).toBeUndefined();
  });

  test('when nobody is signed in, then 401; when a fleet:read token asks, then it may read but not write', async () => {
    expect((await t.request().get(`/api/sites/${siteId}/notes`)).status).toBe(401);
    const admin = await t.signedIn('admin', 'Morgan Admin');
    const issued = await admin.post('/api/tokens').set(csrf).send({ name: 'Site report job', scopes: ['fleet:read'], expiresAt: new Date(Date.now() + 30 * 86_400_000).toISOString() });
    expect(issued.status).toBe(201);
    const auth = { Authorization: `Bearer ${issued.body.token}` };
    const res = await t.request().get(`/api/sites/${siteId}/notes`).set(auth);
    expect(res.status).toBe(200);
    expect(res.body.total).toBe(4);
    expect((await t.request().post(`/api/sites/${siteId}/notes`).set(auth).send({ text: 'from a script' })).status).toBe(403);
  });
});
