// Page cursors are the server's own text; a forged one is the caller's mistake, answered 400 problem+json
// (RFC 9457) naming the cursor, and never reaches PostgreSQL as a value it would refuse. Calendar rule
// for the forged dates: the Gregorian calendar (February has 28 days in 2026, a common year: ISO 8601 /
// RFC 3339 §5.7 "date-mday" limits by month and year); array text form: PostgreSQL manual §8.15.6
// "Array Input and Output Syntax"; base64url: RFC 4648 §5.
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Logger, Site } from '../../server/db/models';

let t: TestApp;
type Agent = Awaited<ReturnType<TestApp['signedIn']>>;
let support: Agent;
let loggerId: string;
let siteId: string;

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  support = await t.signedIn('support', 'Lena Support');
  loggerId = (await Logger.findOne({ order: [['serial', 'ASC']] }))!.id;
  siteId = (await Site.findOne({ order: [['name', 'ASC']] }))!.id;
});
afterAll(() => t.close());

/** A cursor as the server writes one (base64url of a JSON array of strings), with forged contents. */
const forge = (parts: unknown[]) => Buffer.from(JSON.stringify(parts), 'utf8').toString('base64url');
const someId = '6f1c2a4e-8b3d-4c5e-9f7a-0b1c2d3e4f5a';

function expectCursorRefused(res: { status: number; headers: Record<string, string>; body: { errors?: { path: string }[] } }) {
  expect(res.status).toBe(400);
  expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
  expect(res.body.errors?.[0]?.path).toBe('cursor');
}

describe('the fleet table\'s keyset cursor', () => {
  test.each([
    ['a date that does not exist (2026-02-30)', 'lastSeen', '2026-02-30 10:00:00+00', someId],
    ['a month 13', 'lastSeen', '2026-13-01 10:00:00+00', someId],
    ['a malformed array for the firmware sort', 'firmware', '{0001,"unterminated}', someId],
    ['an array element with a quote', 'firmware', '{0001","1}', someId],
    ['an integer beyond int4 (2^31)', 'resets24h', '2147483648', someId],
    ['an id of 36 dashes', 'serial', 'fl2-0001', '-'.repeat(36)],
    ['an id in capitals', 'serial', 'fl2-0001', someId.toUpperCase()],
  ])('when the cursor holds %s, then 400 names the cursor', async (_what, sort, value, id) => {
    const res = await support.get('/api/loggers').query({ sort, dir: 'asc', cursor: forge([sort, 'asc', value, id]) });
    expectCursorRefused(res);
  });

  test('when a cursor the server gave is altered by characters base64url does not have, or is not JSON, or holds a number, then 400', async () => {
    // A cursor of the form the server writes: a logger never seen sorts at -infinity (server/fleet/columns.ts).
    const good = forge(['lastSeen', 'asc', '-infinity', loggerId]);
    expect((await support.get('/api/loggers').query({ sort: 'lastSeen', dir: 'asc', cursor: good })).status).toBe(200);
    expectCursorRefused(await support.get('/api/loggers').query({ sort: 'lastSeen', dir: 'asc', cursor: `${good.slice(0, 5)}!${good.slice(5)}` }));
    expectCursorRefused(await support.get('/api/loggers').query({ sort: 'lastSeen', dir: 'asc', cursor: Buffer.from('not json').toString('base64url') }));
    expectCursorRefused(await support.get('/api/loggers').query({ sort: 'resets24h', dir: 'asc', cursor: forge(['resets24h', 'asc', 3, someId]) }));
  });
});

describe('the timeline cursor', () => {
  test.each([
    ['a date that does not exist (2026-02-30)', ['2026-02-30 10:00:00+00', 'c']],
    ['hour 25', ['2026-03-01 25:00:00+00', 'c']],
    ['an offset beyond ±15:59', ['2026-03-01 10:00:00+16', 'c']],
    ['a key the timeline never writes', ['2026-03-01 10:00:00+00', "x' OR '1'='1"]],
    ['three parts', ['2026-03-01 10:00:00+00', 'c', 'c']],
  ])('when the cursor holds %s, then 400 names the cursor', async (_what, parts) => {
    expectCursorRefused(await support.get(`/api/loggers/${loggerId}/timeline`).query({ cursor: forge(parts) }));
  });
});

describe('the site notes cursor', () => {
  test.each([
    ['a date that does not exist (2026-02-30)', ['2026-02-30 10:00:00+00', someId]],
    ['29 February of a common year (2026)', ['2026-02-29 10:00:00+00', someId]],
    ['an id that is not a UUID', ['2026-03-01 10:00:00+00', 'not-a-uuid']],
  ])('when the cursor holds %s, then 400 names the cursor', async (_what, parts) => {
    expectCursorRefused(await support.get(`/api/sites/${siteId}/notes`).query({ cursor: forge(parts) }));
  });

  test('when the cursor holds 29 February of a leap year (2028), then it is a cursor PostgreSQL reads (200)', async () => {
    const res = await support.get(`/api/sites/${siteId}/notes`).query({ cursor: forge(['2028-02-29 10:00:00+00', someId]) });
    expect(res.status).toBe(200);
  });
});

describe('the activity log cursor', () => {
  test('when the cursor is the id a page ended on, then the next page follows; written any other way (exponent, sign, beyond 2^53), then 400 names it', async () => {
    // Three notes make three activity rows, so there is a second page.
    for (const text of ['Gate code changed', 'Ladder kept in the shed', 'Dog on site']) {
      expect((await support.post(`/api/sites/${siteId}/notes`).set(csrf).send({ text })).status).toBe(201);
    }
    const first = await support.get('/api/activity').query({ pageSize: 2 });
    expect(first.body.nextCursor).toMatch(/^[1-9]\d*$/);
    expect(first.status).toBe(200);
    const next = await support.get('/api/activity').query({ pageSize: 2, before: first.body.nextCursor });
    expect(next.status).toBe(200);
    expect(next.body.rows[0].id).toBeLessThan(first.body.rows[1].id);
    for (const before of ['1e3', '+5', '-1', '0', '9007199254740993', '12 ', '0x10']) {
      const res = await support.get('/api/activity').query({ before });
      expect(res.status).toBe(400);
      expect(res.body.errors[0].path).toBe('before');
    }
  });
});
