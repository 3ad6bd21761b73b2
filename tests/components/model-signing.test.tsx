// The model's signing page: the rule (k of n), the trust set loggers follow, and the next version that
// waits for signatures by keys of the one before (TUF's rule, docs/SOURCES.md §6: the threshold of the
// current set signs the next). The rule form checks with the shared schema (schemas/models.ts
// signingThresholdSchema) and asks before it sends; a pasted `heliodor trust sign` output is checked
// with schemas/keys.ts trustSignatureRequest. Key ids are those of the RFC 8032 §7.1 TEST 1–3 keys
// (docs/SOURCES.md §1).
import React from 'react';
import { act } from 'react';
import { render } from './render';
import { ModelSigningScreen } from '../../components/model-signing';
import type { Model } from '../../hooks/models';
import type { TrustSetVersionView, TrustSetView } from '../../schemas/keys';
import { rfc8032 } from '../helpers/vectors';

const [k1, k2, k3] = rfc8032.map((v, i) => ({ keyId: v.keyId, name: ['Morgan’s key', 'Priya’s key', 'Bench key'][i] }));
const keys = [k1, k2, k3].map((k) => ({ ...k, algorithm: 'ed25519' as const }));

const model: Model = {
  id: '6f1c1d3e-3f57-4c55-9d55-0c6b3f0c9a01',
  name: 'FL-2 field logger',
  boards: [{ label: 'B', note: 'bulk capacitors' }],
  minUpdateSupplyV: 4.6,
  checkInIntervalS: 900,
  busVMax: 36,
  shuntFullScaleV: 0.08192,
  tempResolutions: [9, 10, 11, 12],
  signingThreshold: 2,
  loggerCount: 14,
  createdAt: '2026-03-01T09:00:00.000Z',
  can: { edit: true },
};

const version = (v: number, threshold: number, over: Partial<TrustSetVersionView> = {}): TrustSetVersionView => ({
  version: v,
  threshold,
  keys,
  expires: '2027-03-01T09:00:00Z',
  createdAt: '2026-03-01T09:00:00.000Z',
  signedAt: '2026-03-01T09:05:00.000Z',
  signedBy: [],
  needs: 1,
  missing: [],
  canonical: `{"expires":"2027-03-01T09:00:00Z","keys":[],"model":"${model.id}","threshold":${threshold},"version":${v}}`,
  ...over,
});

// Version 4 (2 of 3) is in force; version 5 (3 of 3) needs 2 of version 4's keys and has one.
const trust: TrustSetView = {
  modelId: model.id,
  signingThreshold: 3,
  current: version(4, 2),
  pending: version(5, 3, { signedAt: null, needs: 2, signedBy: [k1], missing: [k2, k3] }),
};

const ready = <T,>(data: T) => ({ data, isPending: false, error: null, refetch: jest.fn() });

function screen(over: { model?: Model; trust?: TrustSetView; changeRule?: jest.Mock; sign?: jest.Mock } = {}) {
  const changeRule = over.changeRule ?? jest.fn();
  const sign = over.sign ?? jest.fn();
  const view = render(
    <ModelSigningScreen
      model={ready(over.model ?? model)}
      trust={ready(over.trust ?? trust)}
      wide={false}
      changeRule={{ busy: false, error: null, run: changeRule }}
      sign={{ busy: false, error: null, run: sign }}
      onBack={jest.fn()}
    />,
  );
  return { view, changeRule, sign };
}

/** The dialog is drawn outside the screen's container (a modal), so it is read from the document. */
const dialog = () => document.body.querySelector('[data-testid="confirm-rule"]');

describe('model signing page', () => {
  test('when a trust set waits with one of the two signatures it needs, then the page names who signed, who has not, and the command to sign', () => {
    const { view } = screen();
    expect(view.byTestId('signing-rule-figure').textContent).toBe('2 of 3');
    expect(view.byTestId('trust-pending-count').textContent).toBe('1 of 2 signed');
    const signers = view.byTestId('trust-signers').textContent!;
    expect(signers).toContain(`Morgan’s key${k1.keyId}Signed`);
    expect(signers).toContain(`Priya’s key${k2.keyId}Not yet`);
    expect(signers).toContain(`Bench key${k3.keyId}Not yet`);
    expect(view.text()).toContain('1 more needed');
    expect(view.byTestId('trust-sign-command').textContent).toBe('heliodor trust sign --key <your key>.private.pem trust-set-v5.json');
    expect(view.byTestId('trust-canonical').textContent).toBe(trust.pending!.canonical);
    expect(view.byTestId('trust-current').textContent).toContain('Loggers follow version 4');
    view.unmount();
  });

  test('when an admin asks for more signatures than there are keys, then the field says so and no confirmation opens', async () => {
    const { view, changeRule } = screen();
    view.type('signing-threshold', '4');
    view.press('change-rule');
    await view.settle();
    expect(view.fieldMessage('signing-threshold')).toBe('at most 3, the registered keys that are not revoked');
    expect(dialog()).toBeNull();
    // The shared rule (schemas/models.ts): a whole number of keys.
    view.type('signing-threshold', '1.5');
    await view.settle();
    expect(view.fieldMessage('signing-threshold')).toBe('must be a whole number of keys');
    expect(changeRule).not.toHaveBeenCalled();
    view.unmount();
  });

  test('when an admin changes the rule to 3, then the confirmation says version 5 of the trust set will need signatures, and only confirming sends it', async () => {
    const { view, changeRule } = screen();
    view.type('signing-threshold', '3');
    view.press('change-rule');
    await view.settle();
    const asked = dialog();
    expect(asked).not.toBeNull();
    expect(asked!.textContent).toContain('Change the signing rule to 3 of 3?');
    expect(asked!.textContent).toContain('A new trust set version 5 will need signatures by 2 keys of version 4');
    expect(changeRule).not.toHaveBeenCalled();
    act(() => (document.body.querySelector('[data-testid="confirm-rule-confirm"]') as HTMLElement).click());
    expect(changeRule).toHaveBeenCalledWith(3, expect.any(Function));
    view.unmount();
  });

  test('when a release engineer pastes the output of heliodor trust sign, then it is sent as the signature request; output for another version is refused on the field', async () => {
    const { view, sign } = screen({ model: { ...model, can: { edit: false } } });
    expect(() => view.byTestId('signing-threshold')).toThrow();
    const output = { version: 4, keyId: k2.keyId, algorithm: 'ed25519', signature: 'c2lnbmF0dXJl' };
    view.type('trust-signature', JSON.stringify(output));
    view.press('add-trust-signature');
    await view.settle();
    expect(view.fieldMessage('trust-signature')).toBe('signs version 4; the set waiting is version 5: sign its text again');
    view.type('trust-signature', 'not json');
    await view.settle();
    expect(view.fieldMessage('trust-signature')).toBe('is not the output of heliodor trust sign (one line of JSON)');
    expect(sign).not.toHaveBeenCalled();
    view.type('trust-signature', `${JSON.stringify({ ...output, version: 5 })}\n`);
    view.press('add-trust-signature');
    await view.settle();
    expect(sign).toHaveBeenCalledWith({ ...output, version: 5 }, expect.any(Function));
    view.unmount();
  });
});
