// The logger page's batch card: it names the CSV batch the logger was registered in and, for an admin,
// offers new labels for the loggers of the batch still waiting for enrollment, behind a confirmation that
// says the old labels stop working (docs/PRODUCT.md journey 1: a lost label means a new token, and the old
// label becomes useless; docs/DESIGN.md: a consequential action is confirmed, naming its consequence).
import React from 'react';
import { act } from 'react';
import { render } from './render';
import { LoggerScreen } from '../../components/logger-screen';
import type { LoggerDetail } from '../../schemas/loggers';

const logger: LoggerDetail = {
  id: '0b5e4e2a-6c1d-4f3a-9e8b-7a6c5d4e3f21',
  serial: 'FL2-RB3',
  modelId: '1c2d3e4f-5a6b-4c7d-8e9f-0a1b2c3d4e5f',
  modelName: 'FL-2 field logger',
  board: 'C',
  channel: 'stable',
  status: 'registered',
  online: false,
  site: null,
  enrolledAt: null,
  enrolledBy: null,
  install: null,
  profile: null,
  firmware: null,
  lastSeenAt: null,
  supplyV: null,
  tokenIssuedAt: '2026-06-01T09:00:00.000Z',
  retiredAt: null,
  createdAt: '2026-06-01T09:00:00.000Z',
  can: { enroll: false, move: false, retire: false, rotateToken: false, editProfile: false, addNote: false, addPhoto: false },
  batch: { id: '7d6c5b4a-3f2e-4d1c-8b0a-9f8e7d6c5b4a', fileName: 'aldmere-june.csv', registeredAt: '2026-06-01T09:00:00.000Z', count: 40, waiting: 12 },
};

const idle = { busy: false, error: null, run: jest.fn() };

function screen(props: { detail?: LoggerDetail; admin?: boolean; run?: jest.Mock }) {
  const detail = props.detail ?? logger;
  const can = { ...detail.can, rotateToken: Boolean(props.admin), retire: Boolean(props.admin) };
  return render(
    <LoggerScreen
      state={{ data: { ...detail, can }, isPending: false, error: null, refetch: jest.fn() }}
      rotate={idle}
      retire={idle}
      move={{ ...idle, sites: [] }}
      profile={idle}
      canIssueBatchLabels={Boolean(props.admin)}
      batchLabels={{ busy: false, error: null, run: props.run ?? jest.fn() }}
      photoUrl="/api/loggers/x/photo"
    />,
  );
}

/** The open confirmation dialog (a modal renders outside the screen's own container). */
const dialog = () => document.body.querySelector('[role="alertdialog"]') as HTMLElement | null;

describe('the batch on a logger\'s page', () => {
  test('when an admin opens a logger of a batch, then the card names the batch and how many wait, and the button asks before it acts, saying the old labels stop working', () => {
    const run = jest.fn();
    const view = screen({ admin: true, run });
    expect(view.byTestId('batch').textContent).toContain('Batch aldmere-june.csv');
    expect(view.byTestId('batch').textContent).toContain('40 loggers; 12 still wait for enrollment.');
    expect(dialog()).toBeNull();
    view.press('batch-labels');
    const open = dialog();
    expect(open).not.toBeNull();
    expect(open!.getAttribute('aria-label')).toBe('Issue new labels for the batch aldmere-june.csv?');
    expect(open!.textContent).toContain('Their old labels and bench sheet rows stop working at once');
    expect(open!.textContent).toContain('Each of its 12 loggers still waiting for enrollment gets a new token.');
    expect(run).not.toHaveBeenCalled();
    act(() => (open!.querySelector('[data-testid="confirm"]') as HTMLElement).click());
    expect(run).toHaveBeenCalledWith('7d6c5b4a-3f2e-4d1c-8b0a-9f8e7d6c5b4a');
    view.unmount();
  });

  test('when the person is not an admin, then the batch is named but there is no button', () => {
    const view = screen({ admin: false });
    expect(view.byTestId('batch').textContent).toContain('Batch aldmere-june.csv');
    expect(view.container.querySelector('[data-testid="batch-labels"]')).toBeNull();
    view.unmount();
  });

  test('when every logger of the batch is enrolled or retired, then it says so and offers nothing to replace', () => {
    const view = screen({ admin: true, detail: { ...logger, status: 'enrolled', batch: { ...logger.batch!, waiting: 0 } } });
    expect(view.byTestId('batch').textContent).toContain('all are enrolled or retired.');
    expect(view.container.querySelector('[data-testid="batch-labels"]')).toBeNull();
    view.unmount();
  });

  test('when the logger was registered on its own, then there is no batch card', () => {
    const view = screen({ admin: true, detail: { ...logger, batch: null } });
    expect(view.container.querySelector('[data-testid="batch"]')).toBeNull();
    view.unmount();
  });
});
