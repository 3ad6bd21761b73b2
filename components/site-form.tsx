// Create or edit a site: name, customer, address, optional coordinates, IANA time zone, notes and
// (for admins) the integrators assigned to it. Used on the Sites screens and inline while enrolling.
import React from 'react';
import { Pressable, Text, View } from 'react-native';
import { Button, Field, Notice, Row } from './ui';
import { colors, fonts, radii, space, touchTarget, type } from './theme';
import type { ApiError } from '../hooks/api';
import type { Person, Site, SiteInput } from '../hooks/sites';

/** The browser's own zone is the likeliest one for a site being set up on the spot. */
export function localTimeZone(): string {
  try {
    return Intl.DateTimeFormat().resolvedOptions().timeZone || 'UTC';
  } catch {
    return 'UTC';
  }
}

function validZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: zone });
    return true;
  } catch {
    return false;
  }
}

function numberOrNull(text: string): number | null | 'bad' {
  const t = text.trim().replace(',', '.');
  if (t === '') return null;
  const n = Number(t);
  return Number.isFinite(n) ? n : 'bad';
}

export function SiteForm({
  initial,
  integrators,
  busy,
  error,
  submitLabel,
  onSubmit,
  onCancel,
}: {
  initial?: Partial<Site>;
  integrators?: Person[];
  busy?: boolean;
  error?: ApiError | Error | null;
  submitLabel: string;
  onSubmit: (input: SiteInput) => void;
  onCancel?: () => void;
}) {
  const [name, setName] = React.useState(initial?.name ?? '');
  const [customer, setCustomer] = React.useState(initial?.customer ?? '');
  const [address, setAddress] = React.useState(initial?.address ?? '');
  const [lat, setLat] = React.useState(initial?.latitude != null ? String(initial.latitude) : '');
  const [lon, setLon] = React.useState(initial?.longitude != null ? String(initial.longitude) : '');
  const [zone, setZone] = React.useState(initial?.timeZone ?? localTimeZone());
  const [notes, setNotes] = React.useState(initial?.notes ?? '');
  const [assigned, setAssigned] = React.useState<string[]>(initial?.integratorIds ?? []);
  const [local, setLocal] = React.useState<Record<string, string>>({});

  const server = (path: string) => (error && 'field' in error ? (error as ApiError).field(path) : undefined);
  const fieldError = (path: string) => local[path] ?? server(path);

  const submit = () => {
    const problems: Record<string, string> = {};
    if (!name.trim()) problems.name = 'is required';
    if (!customer.trim()) problems.customer = 'is required';
    if (!address.trim()) problems.address = 'is required';
    const latitude = numberOrNull(lat);
    const longitude = numberOrNull(lon);
    if (latitude === 'bad' || (typeof latitude === 'number' && (latitude < -90 || latitude > 90))) problems.latitude = 'must be a number from -90 to 90';
    if (longitude === 'bad' || (typeof longitude === 'number' && (longitude < -180 || longitude > 180))) problems.longitude = 'must be a number from -180 to 180';
    if ((latitude === null) !== (longitude === null)) problems[latitude === null ? 'latitude' : 'longitude'] = 'give both coordinates or neither';
    if (!validZone(zone.trim())) problems.timeZone = 'must be an IANA time zone such as Europe/London';
    setLocal(problems);
    if (Object.keys(problems).length) return;
    onSubmit({
      name: name.trim(),
      customer: customer.trim(),
      address: address.trim(),
      latitude: latitude as number | null,
      longitude: longitude as number | null,
      timeZone: zone.trim(),
      notes: notes.trim() || undefined,
      ...(integrators ? { integratorIds: assigned } : {}),
    });
  };

  const generalError = error && (!('fieldErrors' in error) || !(error as ApiError).fieldErrors.length) ? error : null;

  return (
    <View style={{ gap: space.md }}>
      <Field label="Site name" value={name} onChangeText={setName} error={fieldError('name')} testID="site-name" placeholder="Aldmere Village Hall" />
      <Field label="Customer" value={customer} onChangeText={setCustomer} error={fieldError('customer')} testID="site-customer" />
      <Field label="Address" value={address} onChangeText={setAddress} error={fieldError('address')} testID="site-address" />
      <Row gap={space.sm} style={{ alignItems: 'flex-start' }}>
        <View style={{ flex: 1 }}>
          <Field label="Latitude (optional)" value={lat} onChangeText={setLat} error={fieldError('latitude')} inputMode="decimal" placeholder="52.1412" />
        </View>
        <View style={{ flex: 1 }}>
          <Field label="Longitude (optional)" value={lon} onChangeText={setLon} error={fieldError('longitude')} inputMode="decimal" placeholder="-1.9821" />
        </View>
      </Row>
      <Field
        label="Time zone"
        value={zone}
        onChangeText={setZone}
        error={fieldError('timeZone')}
        hint="IANA name; the daylight window for updates is worked out in this zone"
        autoCapitalize="none"
        testID="site-timezone"
      />
      <Field label="Notes (optional)" value={notes} onChangeText={setNotes} error={fieldError('notes')} multiline style={{ minHeight: 72, paddingTop: space.sm }} />
      {integrators ? (
        <View style={{ gap: space.xs }}>
          <Text style={type.label}>Integrators assigned</Text>
          <View style={{ flexDirection: 'row', flexWrap: 'wrap', gap: space.sm }}>
            {integrators.map((p) => {
              const on = assigned.includes(p.id);
              return (
                <Pressable
                  key={p.id}
                  role="checkbox"
                  aria-checked={on}
                  aria-label={p.name}
                  onPress={() => setAssigned(on ? assigned.filter((x) => x !== p.id) : [...assigned, p.id])}
                  style={{
                    minHeight: touchTarget,
                    paddingHorizontal: space.md,
                    justifyContent: 'center',
                    borderRadius: radii.md,
                    borderWidth: on ? 2 : 1,
                    borderColor: on ? colors.ink : colors.line,
                    backgroundColor: on ? colors.paperDeep : colors.surface,
                  }}
                >
                  <Text style={[type.body, { fontFamily: on ? fonts.semibold : fonts.regular }]}>
                    {on ? '✓ ' : ''}
                    {p.name}
                  </Text>
                </Pressable>
              );
            })}
          </View>
        </View>
      ) : null}
      {generalError ? <Notice title={(generalError as ApiError).title ?? 'Could not save the site'} detail={(generalError as ApiError).detail ?? generalError.message} /> : null}
      <Row gap={space.sm} wrap>
        <Button label={submitLabel} onPress={submit} busy={busy} testID="site-save" />
        {onCancel ? <Button label="Cancel" variant="secondary" onPress={onCancel} /> : null}
      </Row>
    </View>
  );
}
