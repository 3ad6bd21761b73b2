import { htmlFromText, withHtml } from '../../server/mail/compose';
import { invitationMail, passwordResetMail } from '../../server/mail/accounts';

describe('the console\'s e-mails', () => {
  const link = 'http://127.0.0.1:8080/invitation#t=hiv_' + 'a'.repeat(43);

  test('when an invitation is written, then the link is the first line of the text and a button in the HTML, with the role and the expiry', () => {
    const m = invitationMail({ link, role: 'integrator', invitedBy: 'Morgan', expiresAt: new Date('2026-03-04T10:00:00Z') });
    expect(m.text.split('\n')[0]).toBe(link);
    expect(m.subject).toBe('Morgan invited you to Heliodor');
    expect(m.text).toContain('Your role: Integrator.');
    expect(m.text).toContain('2026-03-04 10:00 UTC');
    expect(m.html).toContain(`href="${link}"`);
    expect(m.html).toContain('Join the team');
    expect(m.html).toMatch(/^<!doctype html>/);
  });

  test('when a password-reset mail is written, then the link comes first and it says the link works once for one hour', () => {
    const reset = 'http://127.0.0.1:8080/reset-password#t=hpr_' + 'b'.repeat(43);
    const m = passwordResetMail({ link: reset, email: 'lena@fernhollow.example', expiresAt: new Date('2026-03-04T11:00:00Z') });
    expect(m.text.split('\n')[0]).toBe(reset);
    expect(m.text).toContain('works once');
    expect(m.text).toContain('one hour');
    expect(m.html).toContain(`href="${reset}"`);
  });

  test('when a message was written as text only, then an HTML part saying the same is added and its markup is escaped', () => {
    const mail = withHtml({ to: ['morgan@fernhollow.example'], subject: 'Release 2.3.0 tripped', text: 'Failure ratio 7.5 % > 5 %.\n\nOpen <the release>.' });
    expect(mail.html).toContain('Failure ratio 7.5 % &gt; 5 %.');
    expect(mail.html).toContain('Open &lt;the release&gt;.');
    expect(htmlFromText('x', 'see https://heliodor.example/releases/1')).toContain('<a href="https://heliodor.example/releases/1">');
    const given = withHtml({ to: [], subject: 's', text: 't', html: '<p>mine</p>' });
    expect(given.html).toBe('<p>mine</p>');
  });
});
