// The site form checks with the shared site schema (schemas/sites.ts) through react-hook-form, and puts
// the server's field errors (RFC 9457 problem details with `errors: [{path, message}]`) on their fields.
import React from 'react';
import { render } from './render';
import { SiteForm } from '../../components/site-form';
import { ApiError } from '../../hooks/api';

function fillRequired(view: ReturnType<typeof render>) {
  view.type('site-name', 'Aldmere Village Hall');
  view.type('site-customer', 'Fernhollow Energy Co-op');
  view.type('site-address', '1 Green Lane, Aldmere Vale');
  view.type('site-timezone', 'Europe/London');
}

describe('site form', () => {
  test('when the latitude is beyond 90°, then the shared rule’s message shows on the latitude field and nothing is sent', async () => {
    const onSubmit = jest.fn();
    const view = render(<SiteForm submitLabel="Create site" onSubmit={onSubmit} />);
    fillRequired(view);
    // ISO 6709: latitude runs from -90° (south pole) to +90° (north pole).
    view.type('site-latitude', '95');
    view.type('site-longitude', '-1.9821');
    view.press('site-save');
    await view.settle();
    expect(view.fieldMessage('site-latitude')).toBe('must be between -90 and 90');
    expect(view.fieldMessage('site-longitude')).toBeNull();
    expect(onSubmit).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when a required field is left blank, then that field says it is required and nothing is sent', async () => {
    const onSubmit = jest.fn();
    const view = render(<SiteForm submitLabel="Create site" onSubmit={onSubmit} />);
    fillRequired(view);
    view.type('site-customer', '   ');
    view.press('site-save');
    await view.settle();
    expect(view.fieldMessage('site-customer')).toBe('is required');
    expect(view.fieldMessage('site-name')).toBeNull();
    expect(onSubmit).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when coordinates are typed with a decimal comma and the zone in lower case, then the site is sent with numbers and the zone’s canonical name', async () => {
    const onSubmit = jest.fn();
    const view = render(<SiteForm submitLabel="Create site" onSubmit={onSubmit} />);
    fillRequired(view);
    view.type('site-latitude', '52,1412');
    view.type('site-longitude', '-1,9821');
    // The IANA time zone database spells the zone "Europe/London"; ECMA-402 matches zone names
    // case-insensitively and answers the database's spelling.
    view.type('site-timezone', 'europe/london');
    view.press('site-save');
    await view.settle();
    expect(onSubmit).toHaveBeenCalledWith({
      name: 'Aldmere Village Hall',
      customer: 'Fernhollow Energy Co-op',
      address: '1 Green Lane, Aldmere Vale',
      latitude: 52.1412,
      longitude: -1.9821,
      timeZone: 'Europe/London',
      minTempC: null, // the lowest expected temperature left empty
      notes: '',
    });
    view.unmount();
  });

  test('when the server refuses the time zone, then its message shows on the time zone field', async () => {
    const error = new ApiError(400, {
      title: 'Invalid request',
      detail: 'Some fields are not valid.',
      status: 400,
      errors: [{ path: 'timeZone', message: 'must be an IANA time zone such as Europe/London' }],
    });
    const view = render(<SiteForm submitLabel="Create site" error={error} onSubmit={jest.fn()} />);
    await view.settle();
    expect(view.fieldMessage('site-timezone')).toBe('must be an IANA time zone such as Europe/London');
    expect(view.fieldMessage('site-name')).toBeNull();
    view.unmount();
  });
});
