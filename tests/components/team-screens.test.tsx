import React from 'react';
import { render } from './render';
import { TeamScreen } from '../../components/team-screen';
import { SecondFactorCodeScreen } from '../../components/second-factor-code';
import { ResetPasswordScreen } from '../../components/password-screens';
import type { TeamMember } from '../../schemas/team';

jest.mock('expo-router', () => ({ Link: ({ children }: { children: React.ReactNode }) => children }));

const now = new Date('2026-03-02T10:00:00Z');
const member = (over: Partial<TeamMember>): TeamMember => ({
  id: '0b9c1c5e-6a5e-4d33-9a57-6f1e2b7c1a01',
  name: 'Tomasz',
  email: 'tomasz@fernhollow.example',
  role: 'integrator',
  status: 'active',
  lastSignInAt: '2026-03-02T08:00:00Z',
  secondFactor: false,
  invitationExpiresAt: null,
  invitedBy: null,
  joinedAt: '2026-02-01T08:00:00Z',
  ...over,
});

function team(rows: TeamMember[], invite = jest.fn(), ask = jest.fn()) {
  return render(
    <TeamScreen
      state={{ data: { rows, total: rows.length }, isPending: false, error: null, refetch: jest.fn() }}
      meId="me"
      wide={false}
      now={now}
      invite={{ run: invite, busy: false, error: null, sent: null }}
      act={{ run: jest.fn(), busy: false, error: null, pending: null, ask, notice: null }}
    />,
  );
}

describe('team screen', () => {
  test('when people are listed, then each status and the second factor are said in words, not colour alone', () => {
    const view = team([
      member({}),
      member({ id: '0b9c1c5e-6a5e-4d33-9a57-6f1e2b7c1a02', name: 'ines', email: 'ines@fernhollow.example', status: 'invited', lastSignInAt: null, invitationExpiresAt: '2026-03-05T10:00:00Z' }),
      member({ id: '0b9c1c5e-6a5e-4d33-9a57-6f1e2b7c1a03', name: 'Lena', email: 'lena@fernhollow.example', role: 'support', status: 'disabled', secondFactor: true }),
    ]);
    const text = view.text();
    for (const word of ['Active', 'Invited', 'Disabled', 'Second factor off', 'Second factor on', 'Last signed in 2 h ago', 'Invitation link expires in 3 d']) expect(text).toContain(word);
    view.unmount();
  });

  test('when the invitation form is sent with an address that is not one, then it says so and does not send', () => {
    const invite = jest.fn();
    const view = team([], invite);
    view.type('invite-email', 'not an address');
    view.press('invite-send');
    expect(view.text()).toContain('Must be an e-mail address.');
    expect(invite).not.toHaveBeenCalled();
    view.type('invite-email', '  Noor@Fernhollow.Example ');
    view.press('invite-send');
    expect(invite).toHaveBeenCalledWith('noor@fernhollow.example', 'integrator', expect.any(Function));
    view.unmount();
  });

  test('when an admin presses Disable on an active person, then the screen asks before anything happens', () => {
    const ask = jest.fn();
    const view = team([member({})], jest.fn(), ask);
    view.press('disable-tomasz@fernhollow.example');
    expect(ask).toHaveBeenCalledWith({ kind: 'disable', member: expect.objectContaining({ name: 'Tomasz' }) });
    view.unmount();
  });
});

describe('sign-in code and password reset', () => {
  test('when the code step is sent with five digits, then it asks for six and does not send; a recovery code can be given instead', () => {
    const onSubmit = jest.fn();
    const view = render(<SecondFactorCodeScreen busy={false} error={null} onSubmit={onSubmit} onCancel={jest.fn()} />);
    view.type('second-factor-code', '12345');
    view.press('second-factor-submit');
    expect(view.text()).toContain('Must be the 6 digits your app shows.');
    expect(onSubmit).not.toHaveBeenCalled();
    view.type('second-factor-code', '123 456');
    view.press('second-factor-submit');
    expect(onSubmit).toHaveBeenCalledWith({ code: '123 456' });
    view.unmount();
  });

  test('when the new password is short or typed differently twice, then the reset screen says which (OWASP ASVS 4.0 §2.1.1) and does not send', () => {
    const onSubmit = jest.fn();
    const view = render(<ResetPasswordScreen hasToken busy={false} error={null} done={null} onSubmit={onSubmit} />);
    view.type('new-password', 'too short');
    view.type('new-password-repeat', 'too short');
    view.press('reset-confirm');
    expect(view.text()).toContain('Must be at least 12 bytes long.');
    view.type('new-password', 'pump house at dawn');
    view.type('new-password-repeat', 'pump house at dusk');
    view.press('reset-confirm');
    expect(view.text()).toContain('Does not match the password above.');
    expect(onSubmit).not.toHaveBeenCalled();
    view.type('new-password-repeat', 'pump house at dawn');
    view.press('reset-confirm');
    expect(onSubmit).toHaveBeenCalledWith('pump house at dawn');
    view.unmount();
  });
});
