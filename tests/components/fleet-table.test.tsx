// The fleet table on a wide screen, drawn from the column list (schemas/fleet.ts and the console's looks
// in components/fleet-table.tsx): its headers in order, which of them sort (the WAI-ARIA 1.2 `aria-sort`
// state), the sort request a header press makes, hidden columns, and the column chooser's list.
import React from 'react';
import { act } from 'react';
import { render } from './render';
import { FleetTable, choosableColumns } from '../../components/fleet-table';
import { countText, Pager } from '../../components/fleet-controls';
import type { FleetRow } from '../../hooks/fleet';

const row = (i: number, over: Partial<FleetRow> = {}): FleetRow => ({
  id: `00000000-0000-4000-8000-00000000000${i}`,
  serial: `FH-AV-000${i}`,
  siteId: '10000000-0000-4000-8000-000000000001',
  siteName: 'Aldmere Village Hall',
  customer: 'Aldmere Parish Council',
  modelId: '20000000-0000-4000-8000-000000000001',
  modelName: 'FL-2 field logger',
  board: 'B',
  channel: 'stable',
  status: 'enrolled',
  firmware: '2.3.0',
  updateState: 'up_to_date',
  lastSeenAt: null,
  supplyV: 5.1,
  tempC: 21.5,
  resets24h: 0,
  flags: [],
  worstFlag: null,
  ...over,
});

const rows = [row(1), row(2, { supplyV: 4.5, flags: ['low_supply'], worstFlag: 'low_supply', resets24h: 3 })];
const props = { rows, total: 2, sort: 'serial' as const, dir: 'asc' as const, page: 1, pageSize: 25, hidden: [] as string[], onSort: jest.fn(), onOpen: jest.fn() };

const headers = (container: HTMLElement) => [...container.querySelectorAll('[role="columnheader"]')] as HTMLElement[];

describe('fleet table', () => {
  test('when the table is drawn, then its headers are the fleet columns in order, the CSV-only status and probe reading left out', () => {
    const view = render(<FleetTable {...props} />);
    expect(headers(view.container).map((h) => h.textContent)).toEqual([
      'Serial ▲',
      'Site',
      'Customer',
      'Model',
      'Board',
      'Channel',
      'Firmware',
      'Update',
      'Last seen',
      'Supply',
      'Resets 24 h',
      'Flags',
    ]);
    expect(view.text()).toContain('4.50 V');
    expect(view.text()).toContain('Low supply');
    view.unmount();
  });

  test('when a sortable header is pressed, then the table asks for that column as the sort; the flags header does not sort', () => {
    const onSort = jest.fn();
    const view = render(<FleetTable {...props} onSort={onSort} />);
    const byLabel = (label: string) => headers(view.container).find((h) => h.getAttribute('aria-label') === label);
    expect(headers(view.container)[0].getAttribute('aria-sort')).toBe('ascending');
    act(() => byLabel('Sort by Last seen')!.click());
    expect(onSort).toHaveBeenLastCalledWith('lastSeen', 'asc');
    // Figures sort highest first on the first press: the most resets, the highest supply.
    act(() => byLabel('Sort by Resets 24 h')!.click());
    expect(onSort).toHaveBeenLastCalledWith('resets24h', 'desc');
    act(() => byLabel('Sort by Supply')!.click());
    expect(onSort).toHaveBeenLastCalledWith('supplyV', 'desc');
    expect(byLabel('Sort by Flags')).toBeUndefined();
    expect(byLabel('Flags')).toBeDefined();
    view.unmount();
  });

  test('when columns are hidden, then their headers and cells are gone and the serial stays', () => {
    const view = render(<FleetTable {...props} hidden={['customer', 'supplyV']} />);
    const labels = headers(view.container).map((h) => h.textContent);
    expect(labels).not.toContain('Customer');
    expect(labels).not.toContain('Supply');
    expect(labels[0]).toBe('Serial ▲');
    expect(view.text()).not.toContain('Aldmere Parish Council');
    expect(view.text()).not.toContain('4.50 V');
    view.unmount();
  });

  test('when the column chooser lists columns, then it offers every shown column but the serial', () => {
    expect(choosableColumns.map((c) => c.label)).toEqual(['Site', 'Customer', 'Model', 'Board', 'Channel', 'Firmware', 'Update', 'Last seen', 'Supply', 'Resets 24 h', 'Flags']);
    expect(choosableColumns.map((c) => c.id)).toEqual(['site', 'customer', 'model', 'board', 'channel', 'firmware', 'updateState', 'lastSeen', 'supplyV', 'resets24h', 'flags']);
  });
});

describe('fleet pager', () => {
  test('when the total is the database estimate, then the range says "about" with two figures, digits grouped in threes (common practice)', () => {
    const view = render(<Pager total={100_412} totalIsEstimate page={1} pageSize={25} onPage={jest.fn()} wide />);
    expect(view.byTestId('pager-range').textContent).toBe('1–25 of about 100\u00a0000');
    expect(countText(8_332, true)).toBe('about 8\u00a0300');
  });

  test('when the total is exact, then the range shows it as it is', () => {
    const view = render(<Pager total={36} page={2} pageSize={25} onPage={jest.fn()} wide />);
    expect(view.byTestId('pager-range').textContent).toBe('26–36 of 36');
    expect(countText(8_332)).toBe('8332');
  });
});
