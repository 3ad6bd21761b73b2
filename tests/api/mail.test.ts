import { startTestApp, type TestApp } from '../helpers/app';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp();
});
afterAll(() => t.close());

describe('mail through the local SMTP fake', () => {
  test('when the console sends a message, then the dev mailbox lists it with to, subject, text and sentAt', async () => {
    const subject = `Release 2.3.0 stopped ${Date.now()}`;
    await t.app.services.mailer.send({ to: ['morgan@fernhollow.example'], subject, text: 'Failure ratio 7.5 % of 5 %.', html: '<p>Failure ratio 7.5 % of 5 %.</p>' });
    const admin = await t.signedIn('admin');
    let found: { to: string[]; subject: string; text: string; html: string; sentAt: string } | undefined;
    for (let i = 0; i < 20 && !found; i++) {
      const res = await admin.get('/api/dev/outbox');
      expect(res.status).toBe(200);
      found = res.body.find((m: { subject: string }) => m.subject === subject);
      if (!found) await new Promise((r) => setTimeout(r, 100));
    }
    expect(found).toMatchObject({ to: ['morgan@fernhollow.example'], subject, text: expect.stringContaining('7.5 %') });
    expect(found?.html).toContain('<p>');
    expect(Number.isNaN(Date.parse(found!.sentAt))).toBe(false);
  });
});
