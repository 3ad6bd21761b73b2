// Registering one logger checks with the shared registration schema (schemas/loggers.ts) through
// react-hook-form; the server's field errors (RFC 9457 problem details) land on their fields.
import React from 'react';
import { render } from './render';
import { RegisterScreen } from '../../components/register-screen';
import { ApiError } from '../../hooks/api';
import type { Model } from '../../hooks/models';

const model = {
  id: '3f2a1b4c-5d6e-4f70-8a9b-0c1d2e3f4a5b',
  name: 'FL-2 field logger',
  boards: [
    { label: 'A', note: 'first run' },
    { label: 'B', note: '' },
  ],
} as unknown as Model;

const batch = { busy: false, error: null, progress: 0, run: jest.fn() };
const alertIn = (el: HTMLElement) => el.querySelector('[role="alert"]')?.textContent ?? null;

describe('register one logger', () => {
  test('when no board revision is chosen, then the board choice asks for one and nothing is registered', async () => {
    const run = jest.fn();
    const view = render(<RegisterScreen models={{ rows: [model], loading: false, error: null }} single={{ busy: false, error: null, run }} batch={batch} />);
    view.type('serial', 'FL2-00121');
    view.press('register-one');
    await view.settle();
    expect(alertIn(view.byTestId('board'))).toBe('choose the board revision');
    expect(view.fieldMessage('serial')).toBeNull();
    expect(run).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when the serial has a space in it, then the serial field gives the shared rule and nothing is registered', async () => {
    const run = jest.fn();
    const view = render(<RegisterScreen models={{ rows: [model], loading: false, error: null }} single={{ busy: false, error: null, run }} batch={batch} />);
    // The serial rule (schemas/loggers.ts) allows letters, digits, "-", "_" and "."; a space is none of them.
    view.type('serial', 'FL2 00121');
    view.press('register-one');
    await view.settle();
    expect(view.fieldMessage('serial')).toBe('must be 3 to 40 characters of letters, digits, "-", "_" or "."');
    expect(run).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when the server says the serial is taken, then its message shows on the serial field', async () => {
    const error = new ApiError(409, { title: 'Already registered', detail: 'A logger with this serial exists.', status: 409, errors: [{ path: 'serial', message: 'is already registered' }] });
    const view = render(<RegisterScreen models={{ rows: [model], loading: false, error: null }} single={{ busy: false, error, run: jest.fn() }} batch={batch} />);
    await view.settle();
    expect(view.fieldMessage('serial')).toBe('is already registered');
    view.unmount();
  });
});
