// The site's notes card in its states: loading, failed, empty, a page with older notes to
// fetch, and read-only for roles that may not write. Times are the site's (lib/site-time.ts): a site in
// Europe/London in June is on BST, UTC+1, by the tz database's EU rule (docs/SOURCES.md §18); the test
// renders the phone layout, where UTC is only in the time's accessible name.
import React from 'react';
import { render } from './render';
import { SiteNotes, type SiteNotesState } from '../../components/fleet-logger';
import { ApiError } from '../../hooks/api';

// The card sits beside the sparklines in fleet-logger.tsx; the chart library ships ES modules this
// project's client transform does not compile, and the notes card draws no chart.
jest.mock('../../components/charts/line', () => ({ Sparkline: () => null }));

const base: SiteNotesState = { pages: [], isPending: false, error: null, refetch: jest.fn(), hasNextPage: false, isFetchingNextPage: false, fetchNextPage: jest.fn() };
const note = (i: number) => ({ id: `n${i}`, targetType: 'site' as const, targetId: 's1', text: `Note ${i}`, authorName: 'Lena', createdAt: `2026-06-21T09:0${i}:00.000Z` });
const write = { busy: false, error: null, done: false, onAdd: jest.fn() };

describe('site notes', () => {
  test('when the notes are loading, then a skeleton shows and no empty state yet', () => {
    const view = render(<SiteNotes timeZone="Europe/London" state={{ ...base, isPending: true }} />);
    expect(view.container.querySelector('[aria-busy="true"]')).not.toBeNull();
    expect(view.text()).not.toContain('No notes on this site yet.');
    view.unmount();
  });

  test('when reading failed, then the problem’s title and detail show with a way to try again', () => {
    const refetch = jest.fn();
    const error = new ApiError(403, { title: 'Not allowed', detail: 'This site is not assigned to you; ask an admin to assign you to it.', status: 403 });
    const view = render(<SiteNotes timeZone="Europe/London" state={{ ...base, error, refetch }} />);
    expect(view.text()).toContain('Not allowed');
    expect(view.text()).toContain('This site is not assigned to you');
    const retry = [...view.container.querySelectorAll('[role="button"], button')].find((b) => b.textContent === 'Try again') as HTMLElement;
    retry.click();
    expect(refetch).toHaveBeenCalled();
    view.unmount();
  });

  test('when the site has no notes, then it says so; without writing rights there is no form', () => {
    const view = render(<SiteNotes timeZone="Europe/London" state={{ ...base, pages: [{ rows: [], total: 0 }] }} />);
    expect(view.text()).toContain('No notes on this site yet.');
    expect(view.container.querySelector('[data-testid="note-form"]')).toBeNull();
    view.unmount();
  });

  test('when a page of notes has older ones behind it, then they show in the given order with author and the site’s time, and "Show older notes" asks for the next page', () => {
    const fetchNextPage = jest.fn();
    const view = render(<SiteNotes timeZone="Europe/London" state={{ ...base, pages: [{ rows: [note(3), note(2)], total: 3 }], hasNextPage: true, fetchNextPage }} write={write} />);
    expect(view.byTestId('note-form')).toBeTruthy();
    const items = [...view.container.querySelectorAll('[role="listitem"]')].map((e) => e.textContent);
    expect(items).toEqual(['Note 3Lena · 2026-06-21 10:03 BST', 'Note 2Lena · 2026-06-21 10:02 BST']);
    expect(view.container.querySelector('[aria-label="2026-06-21 10:03 BST (2026-06-21 09:03 UTC)"]')).not.toBeNull();
    expect(view.text()).toContain('2 of 3, newest first');
    view.press('site-notes-older');
    expect(fetchNextPage).toHaveBeenCalled();
    view.unmount();
  });
});
