import React from 'react';
import { render } from './render';
import { SignInScreen } from '../../components/sign-in-screen';
import { ApiError } from '../../hooks/api';
import { getBreakpoints } from '../../components/breakpoints';
import { relativeTime } from '../../components/format';

describe('sign-in screen', () => {
  test('when submitted empty, then it names both missing fields and does not submit', () => {
    const onSubmit = jest.fn();
    const view = render(<SignInScreen busy={false} error={null} onSubmit={onSubmit} />);
    view.press('sign-in');
    expect(view.text()).toContain('Enter your e-mail address.');
    expect(view.text()).toContain('Enter your password.');
    expect(onSubmit).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when filled in, then it submits the trimmed e-mail and the password as typed', () => {
    const onSubmit = jest.fn();
    const view = render(<SignInScreen busy={false} error={null} onSubmit={onSubmit} />);
    view.type('email', '  lena@fernhollow.example ');
    view.type('password', ' spaces kept ');
    view.press('sign-in');
    expect(onSubmit).toHaveBeenCalledWith('lena@fernhollow.example', ' spaces kept ');
    view.unmount();
  });

  test('when the server refused the sign-in, then its problem detail is shown', () => {
    const error = new ApiError(401, { title: 'Not signed in', detail: 'The e-mail or password is not right.', status: 401 });
    const view = render(<SignInScreen busy={false} error={error} onSubmit={jest.fn()} />);
    expect(view.text()).toContain('Sign-in failed');
    expect(view.text()).toContain('The e-mail or password is not right.');
    view.unmount();
  });
});

describe('layout and formatting helpers', () => {
  test('when the window is narrower than 900 px, then the phone layout applies (docs/DESIGN.md)', () => {
    expect(getBreakpoints(390).wide).toBe(false);
    expect(getBreakpoints(899).wide).toBe(false);
    expect(getBreakpoints(900).wide).toBe(true);
    expect(getBreakpoints(1280).wide).toBe(true);
  });

  test('when a time is in the past, then it reads relative to now', () => {
    const now = new Date('2026-12-01T12:00:00Z');
    expect(relativeTime('2026-12-01T11:59:50Z', now)).toBe('just now');
    expect(relativeTime('2026-12-01T11:55:00Z', now)).toBe('5 min ago');
    expect(relativeTime('2026-12-01T09:00:00Z', now)).toBe('3 h ago');
    expect(relativeTime('2026-11-28T12:00:00Z', now)).toBe('3 d ago');
    expect(relativeTime('not a date', now)).toBe('—');
  });
});
