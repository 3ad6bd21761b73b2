// Create or edit a site: name, customer, address, optional coordinates, IANA time zone, notes and
// (for admins) the integrators assigned to it. Used on the Sites screens and inline while enrolling.
import React from 'react';
import { Pressable, Text, View } from 'react-native';
import { useController } from 'react-hook-form';
import { z } from 'zod';
import { Button, Notice, Row } from './ui';
import { decimalText, FieldMessage, FormField, formSchema, toggled, useSchemaForm, useServerErrors, whenValid } from './form';
import { colors, fonts, radii, space, touchTarget, type } from './theme';
import type { ApiError } from '../hooks/api';
import type { Person, Site, SiteInput } from '../hooks/sites';
import { createSiteRequest } from '../schemas/sites';

/** The browser's own zone is the likeliest one for a site being set up on the spot. */
export function localTimeZone(): string {
  try {
    return Intl.DateTimeFormat().resolvedOptions().timeZone || 'UTC';
  } catch {
    return 'UTC';
  }
}

/** What the form holds: the API's site fields, with the coordinates as typed text. */
const siteForm = formSchema(
  z.object({
    name: z.string(),
    customer: z.string(),
    address: z.string(),
    latitude: decimalText(null),
    longitude: decimalText(null),
    minTempC: decimalText(null),
    timeZone: z.string(),
    notes: z.string(),
    integratorIds: z.array(z.string()),
  }),
  createSiteRequest,
);

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
  const form = useSchemaForm(siteForm, {
    defaultValues: {
      name: initial?.name ?? '',
      customer: initial?.customer ?? '',
      address: initial?.address ?? '',
      latitude: initial?.latitude != null ? String(initial.latitude) : '',
      longitude: initial?.longitude != null ? String(initial.longitude) : '',
      minTempC: initial?.minTempC != null ? String(initial.minTempC) : '',
      timeZone: initial?.timeZone ?? localTimeZone(),
      notes: initial?.notes ?? '',
      integratorIds: initial?.integratorIds ?? [],
    },
  });
  const { control } = form;
  useServerErrors(form, error);
  const assigned = useController({ control, name: 'integratorIds' }).field;

  // Integrators are assigned by admins only: the others' forms leave the list as it is.
  const submit = whenValid(form, ({ integratorIds, ...site }) => onSubmit(integrators ? { ...site, integratorIds } : site));

  const generalError = error && (!('fieldErrors' in error) || !(error as ApiError).fieldErrors.length) ? error : null;

  return (
    <View style={{ gap: space.md }}>
      <FormField control={control} name="name" label="Site name" testID="site-name" placeholder="Aldmere Village Hall" />
      <FormField control={control} name="customer" label="Customer" testID="site-customer" />
      <FormField control={control} name="address" label="Address" testID="site-address" />
      <Row gap={space.sm} style={{ alignItems: 'flex-start' }}>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="latitude" label="Latitude (optional)" inputMode="decimal" placeholder="52.1412" testID="site-latitude" />
        </View>
        <View style={{ flex: 1 }}>
          <FormField control={control} name="longitude" label="Longitude (optional)" inputMode="decimal" placeholder="-1.9821" testID="site-longitude" />
        </View>
      </Row>
      <FormField
        control={control}
        name="minTempC"
        label="Lowest expected temperature (°C, optional)"
        hint="The coldest air temperature at the site; panels give more voltage in the cold, and the wiring check allows for it"
        inputMode="decimal"
        placeholder="-10"
        testID="site-min-temp"
      />
      <FormField
        control={control}
        name="timeZone"
        label="Time zone"
        hint="IANA name; the daylight window for updates is worked out in this zone"
        autoCapitalize="none"
        testID="site-timezone"
      />
      <FormField control={control} name="notes" label="Notes (optional)" multiline style={{ minHeight: 72, paddingTop: space.sm }} />
      {integrators ? (
        <View style={{ gap: space.xs }}>
          <Text style={type.label}>Integrators assigned</Text>
          <View style={{ flexDirection: 'row', flexWrap: 'wrap', gap: space.sm }}>
            {integrators.map((p) => {
              const on = assigned.value.includes(p.id);
              return (
                <Pressable
                  key={p.id}
                  role="checkbox"
                  aria-checked={on}
                  aria-label={p.name}
                  onPress={() => assigned.onChange(toggled(assigned.value, p.id))}
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
          <FieldMessage control={control} name="integratorIds" />
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
