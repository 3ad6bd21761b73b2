// A draft's targeting form checks with the shared release schema (schemas/releases.ts) through
// react-hook-form: the failure ratio is typed as a percentage and sent as the fraction the API takes,
// and the server's field errors (RFC 9457 problem details, `errors: [{path, message}]`) land on their fields.
import React from 'react';
import { render } from './render';
import { ReleaseTargetingForm } from '../../components/release-targeting-form';
import { ApiError } from '../../hooks/api';
import type { Release } from '../../hooks/releases';

const draft = {
  id: '5b0c8a52-4f7e-4a53-9a3e-0c6f5d8e1a01',
  version: '2.5.0',
  channel: 'stable',
  state: 'draft',
  boards: ['B', 'C'],
  manifestBoards: ['B', 'C'],
  upgradeFrom: null,
  pilotSiteIds: [],
  daylightWindow: true,
  tripFailureRatio: 0.05,
  tripMinReports: 20,
  tripResetFactor: 2,
  notes: '',
} as unknown as Release;

const sites = { data: [{ id: 'a4d6e8f0-1c2b-4d3e-8f5a-6b7c8d9e0f12', name: 'Aldmere Village Hall' }], isPending: false, error: null, refetch: jest.fn() };

function renderForm(props: Partial<React.ComponentProps<typeof ReleaseTargetingForm>> = {}) {
  const onSave = jest.fn();
  const view = render(<ReleaseTargetingForm release={draft} sites={sites} onSave={onSave} onStartPilot={jest.fn()} confirmOpen={false} onConfirmOpen={jest.fn()} {...props} />);
  return { view, onSave };
}

describe('release targeting form', () => {
  test('when the failure ratio is 150 %, then the field says it must be a percentage from 0 to 100 and nothing is saved', async () => {
    const { view, onSave } = renderForm();
    // A share of installs cannot exceed all of them: 100 % is the whole (ISO 80000-1, % = 0.01).
    view.type('stop-ratio', '150');
    view.press('save-draft');
    await view.settle();
    expect(view.fieldMessage('stop-ratio')).toBe('must be a percentage from 0 to 100');
    expect(onSave).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when the minimum number of reports is 0, then the shared rule’s message shows on that field', async () => {
    const { view, onSave } = renderForm();
    view.type('stop-min-reports', '0');
    view.press('save-draft');
    await view.settle();
    expect(view.fieldMessage('stop-min-reports')).toBe('must be at least 1');
    expect(view.fieldMessage('stop-ratio')).toBeNull();
    expect(onSave).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when 7,5 % is typed, then the draft is saved with the fraction 0.075 and the other trip points as numbers', async () => {
    const { view, onSave } = renderForm();
    // ISO 80000-1: 1 % = 0.01, so 7.5 % = 0.075; a decimal comma reads as the decimal sign (ISO 80000-1 allows both).
    view.type('stop-ratio', '7,5');
    view.type('stop-min-reports', '30');
    view.type('trip-reset-factor', '1.5');
    view.type('trip-drift-energy', '15');
    view.type('upgrade-from', '  ');
    view.press('save-draft');
    await view.settle();
    expect(onSave).toHaveBeenCalledWith({
      boards: ['B', 'C'],
      upgradeFrom: null,
      pilotSiteIds: [],
      daylightWindow: true,
      tripFailureRatio: 0.075,
      tripMinReports: 30,
      tripResetFactor: 1.5,
      // The drift trip points: energy typed as 15 % is the fraction 0.15; the others keep their
      // defaults (schemas/words.ts), 3 °C and 2 percentage points as the fraction 0.02.
      tripDriftEnergy: 0.15,
      tripDriftTempC: 3,
      tripDriftFlagged: 0.02,
      notes: '',
      channel: 'stable',
    });
    view.unmount();
  });

  test('when the server refuses the upgrade-from range, then its message shows on that field', async () => {
    const error = new ApiError(400, {
      title: 'Invalid request',
      detail: 'Some fields are not valid.',
      status: 400,
      errors: [{ path: 'upgradeFrom', message: 'is not a semver range (for example ">=2.0.0 <2.4.0" or "^2.3.0")' }],
    });
    const { view } = renderForm({ error });
    await view.settle();
    expect(view.fieldMessage('upgrade-from')).toBe('is not a semver range (for example ">=2.0.0 <2.4.0" or "^2.3.0")');
    expect(view.fieldMessage('stop-ratio')).toBeNull();
    view.unmount();
  });

  test('when the typed range is not semver, then the shared rule refuses it on the field before anything is saved', async () => {
    const { view, onSave } = renderForm();
    // "latest" is a distribution tag, not a version range (npm documentation, "dist-tag"; the range
    // grammar in the node-semver README has no words).
    view.type('upgrade-from', 'latest');
    view.press('save-draft');
    await view.settle();
    expect(view.fieldMessage('upgrade-from')).toBe('is not a semver range (for example ">=2.0.0 <2.4.0" or "^2.3.0")');
    expect(onSave).not.toHaveBeenCalled();
    view.unmount();
  });
});
