// `npm run simulate -- --demo-threshold`: a release that needs two signatures goes out, end to end,
// through the console API and the device API of a running Heliodor:
//   1. three signing keys are made here (private halves stay in this process) and registered;
//   2. a model of its own is added (so the demo's other models keep their rule), and loggers of it are
//      registered and enrolled at one site, made with version 1 of its trust set (threshold 1);
//   3. the model's rule becomes 2 of the keys: trust set version 2 is proposed and signed by key 1,
//      a key of version 1 (`heliodor trust sign` does the same offline);
//   4. a release signed by key 1 alone is uploaded: its pilot is refused, with the problem the server gives;
//   5. key 2 adds its signature, and the pilot starts;
//   6. the loggers check in: each takes trust set version 2 (signed by key 1 of the version it holds),
//      then verifies the offer against it — two signatures by distinct keys of its set — and installs.
import { generateKeyPairSync, randomBytes, createHash } from 'node:crypto';
import { canonicalManifest, parsePublicKeyPem, signManifest, type SigningPublicKey } from '../../server/images/manifest';
import { trustSetBodySchema, trustSetBytes, type TrustSetBody } from '../../server/images/trust';
import { ConsoleSession, registerFleet, SetupError } from './fleet';
import { VirtualLogger, type InstallOutcome, type LoggerEvent, type Offer, type Verdict } from './logger';
import { forkRandom, seededRandom } from './random';

export type ThresholdDemoOptions = {
  session: ConsoleSession;
  baseUrl: string;
  loggers: number;
  seed: number;
  /** Progress lines (stderr). */
  say: (line: string) => void;
};

type Key = { name: string; privateKeyPem: string; publicKey: SigningPublicKey };
type TrustView = { current: { version: number; canonical: string; threshold: number; keys: unknown[] } | null; pending: { version: number; canonical: string; needs: number } | null };

/** What one logger did, for the summary. */
export type LoggerStory = {
  serial: string;
  trust: string[];
  verified: { signatures: string[]; threshold: number; ok: boolean; detail: string }[];
  outcome: InstallOutcome | null;
  firmware: string;
};

export type ThresholdDemoResult = {
  modelName: string;
  keys: { name: string; keyId: string }[];
  rule: string;
  refusal: string;
  release: string;
  stories: LoggerStory[];
  ok: boolean;
};

const RELEASE_VERSION = '1.1.0';
const FIRST_VERSION = '1.0.0';
const BOARD = 'C';

/** A VirtualLogger that keeps what its verification saw: which keys signed the offer, and its own threshold. */
class WitnessLogger extends VirtualLogger {
  readonly verdicts: LoggerStory['verified'] = [];
  override verify(offer: Offer, bytes: Uint8Array): Verdict {
    const verdict = super.verify(offer, bytes);
    this.verdicts.push({
      signatures: (offer.signatures ?? []).map((s) => s.key_id),
      threshold: this.trust?.threshold ?? 1,
      ok: verdict.ok,
      detail: verdict.ok ? 'verified' : verdict.detail,
    });
    return verdict;
  }
}

export function makeKey(name: string): Key {
  const pair = generateKeyPairSync('ed25519');
  const privateKeyPem = String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }));
  return { name, privateKeyPem, publicKey: parsePublicKeyPem(String(pair.publicKey.export({ type: 'spki', format: 'pem' }))) };
}

/** The problem text of a console request that must fail; a success here is a setup error. */
async function refused(attempt: Promise<unknown>, what: string): Promise<string> {
  try {
    await attempt;
  } catch (error) {
    // "POST /api/… failed: 409 Conflict: …": the status and the problem are what a person reads.
    if (error instanceof SetupError) return error.message.replace(/^\S+ \S+ failed: /, '');
    throw error;
  }
  throw new SetupError(`${what} was accepted, but the signing rule should have refused it`);
}

export async function runThresholdDemo(o: ThresholdDemoOptions): Promise<ThresholdDemoResult> {
  const { session, say } = o;
  const run = new Date().toISOString().slice(0, 19).replace(/[-:T]/g, '');
  const random = seededRandom(o.seed);

  // 1. Three keys, made here; only their public halves reach the console.
  const keys = [1, 2, 3].map((n) => makeKey(`Threshold demo key ${n} (${run})`));
  for (const k of keys) await session.request('POST', '/api/keys', { name: k.name, publicKeyPem: k.publicKey.pem });
  say(`registered 3 signing keys: ${keys.map((k) => k.publicKey.keyId).join(', ')}`);

  // 2. A model of its own, and its loggers, made with version 1 of its trust set.
  const modelName = `FL-2T threshold demo ${run}`;
  const model = await session.request<{ id: string }>('POST', '/api/models', {
    name: modelName,
    boards: [{ label: BOARD, note: 'switching regulator' }],
    minUpdateSupplyV: 4.6,
    checkInIntervalS: 300,
    busVMax: 36,
    shuntFullScaleV: 0.08192,
    tempResolutions: [12],
  });
  const sites = (await session.request<{ rows: { id: string; name: string }[] }>('GET', '/api/sites')).rows;
  if (sites.length === 0) throw new SetupError('there is no site to enroll the loggers at; create one first');
  const site = sites[0];
  const v1 = await session.request<TrustView>('GET', `/api/models/${model.id}/trust`);
  if (!v1.current) throw new SetupError(`${modelName} has no trust set: is a signing key registered?`);
  const made: TrustSetBody = trustSetBodySchema.parse(JSON.parse(v1.current.canonical));
  say(`added ${modelName}; trust set version ${made.version}: ${made.threshold} of ${made.keys.length} keys`);
  const identities = await registerFleet(session, {
    count: o.loggers,
    model: model.id,
    siteIds: [site.id],
    boards: [BOARD],
    firmware: () => FIRST_VERSION,
    random,
    serialPrefix: `THR${run.slice(4)}`,
  });
  say(`registered and enrolled ${identities.length} loggers at ${site.name}, running ${FIRST_VERSION}`);

  // 3. The rule becomes 2 of the keys; key 1 (a key of version 1) signs version 2.
  await session.request('PATCH', `/api/models/${model.id}`, { signingThreshold: 2 });
  const proposed = await session.request<TrustView>('GET', `/api/models/${model.id}/trust`);
  if (!proposed.pending) throw new SetupError('changing the rule proposed no trust set');
  const v2 = trustSetBodySchema.parse(JSON.parse(proposed.pending.canonical));
  await session.request('POST', `/api/models/${model.id}/trust/signatures`, {
    version: v2.version,
    keyId: keys[0].publicKey.keyId,
    algorithm: keys[0].publicKey.algorithm,
    signature: signManifest(trustSetBytes(v2), keys[0].privateKeyPem),
  });
  const rule = `${v2.threshold} of ${v2.keys.length}`;
  say(`signing rule ${rule}; trust set version ${v2.version} signed by key 1`);

  // 4. A release signed by key 1 alone: uploaded as a draft, its pilot refused.
  const image = Buffer.concat([Buffer.from(`Heliodor threshold demo image\n${modelName}\nfirmware ${RELEASE_VERSION}\n\n`), randomBytes(32 * 1024)]);
  const manifest = Buffer.from(
    canonicalManifest({
      board_revisions: [BOARD],
      format: 1,
      image_sha256: createHash('sha256').update(image).digest('hex'),
      image_size: image.length,
      issued_at: new Date().toISOString().replace(/\.\d{3}Z$/, 'Z'),
      model: model.id,
      security_counter: 1,
      version: RELEASE_VERSION,
    }),
    'utf8',
  );
  const form = new FormData();
  form.append('image', new Blob([image], { type: 'application/octet-stream' }), `fl2t-${RELEASE_VERSION}.bin`);
  form.append('manifest', new Blob([manifest], { type: 'application/json' }), 'manifest.json');
  form.append('signature', signManifest(manifest, keys[0].privateKeyPem));
  form.append('notes', 'Threshold demo: a release that needs two signatures.');
  const release = await session.request<{ id: string }>('POST', '/api/releases', form);
  await session.request('PATCH', `/api/releases/${release.id}`, { pilotSiteIds: [site.id], daylightWindow: false });
  const refusal = await refused(session.request('POST', `/api/releases/${release.id}/transitions`, { action: 'start_pilot' }), 'the pilot with one signature');
  say(`pilot refused with 1 signature: ${refusal}`);

  // 5. Key 2 signs the same manifest bytes; the pilot starts.
  await session.request('POST', `/api/releases/${release.id}/signatures`, {
    keyId: keys[1].publicKey.keyId,
    algorithm: keys[1].publicKey.algorithm,
    signature: signManifest(manifest, keys[1].privateKeyPem),
  });
  await session.request('POST', `/api/releases/${release.id}/transitions`, { action: 'start_pilot' });
  say(`key 2 signed; ${RELEASE_VERSION} is in pilot at ${site.name}`);

  // 6. The loggers check in (each on its own clock, from one scheduled check-in to the next) until installed.
  let clock = new Date();
  const stories: LoggerStory[] = [];
  for (const identity of identities) {
    const trust: string[] = [];
    const onEvent = (e: LoggerEvent) => {
      if (e.kind === 'trust') trust.push(`version ${e.version} ${e.accepted ? 'accepted' : 'refused'} (${e.detail})`);
    };
    const logger = new WitnessLogger(identity, { baseUrl: o.baseUrl, clock: () => clock, random: forkRandom(random), trustedKeys: [], trustSet: made, failRate: 0, interruptRate: 0, onEvent });
    let outcome: InstallOutcome | null = null;
    for (let turn = 0; turn < 8 && !outcome; turn++) {
      clock = new Date(Math.max(clock.getTime(), logger.nextCheckInAt.getTime()));
      outcome = await logger.cycle(clock);
    }
    stories.push({ serial: logger.serial, trust, verified: logger.verdicts, outcome, firmware: logger.firmware });
  }
  const names = new Map(keys.map((k, i) => [k.publicKey.keyId, `key ${i + 1}`]));
  for (const s of stories) {
    for (const v of s.verified) v.signatures = v.signatures.map((id) => names.get(id) ?? id);
    s.trust = s.trust.map((line) => line.replace(/[0-9a-f]{16}/g, (id) => names.get(id) ?? id));
  }
  const ok = stories.every((s) => s.outcome?.state === 'installed' && s.verified.some((v) => v.ok && v.threshold === 2));
  return { modelName, keys: keys.map((k) => ({ name: k.name, keyId: k.publicKey.keyId })), rule, refusal, release: RELEASE_VERSION, stories, ok };
}

/** The readable summary printed at the end. */
export function thresholdSummary(r: ThresholdDemoResult): string {
  const lines = [
    '',
    `Threshold demo: ${r.modelName}`,
    ...r.keys.map((k, i) => `  key ${i + 1}        ${k.keyId}  ${k.name}`),
    `  signing rule ${r.rule} registered keys (trust set version 2, signed by key 1 of version 1)`,
    `  one signature  pilot refused: ${r.refusal}`,
    `  two signatures ${r.release} in pilot (key 1 and key 2 signed the same manifest)`,
    '',
    'Loggers',
    ...r.stories.map((s) => {
      const verified = s.verified.find((v) => v.ok) ?? s.verified[s.verified.length - 1];
      return [
        `  ${s.serial}`,
        `    trust set  ${s.trust.join('; ') || 'no change'}`,
        `    verified   ${verified ? `${verified.ok ? 'yes' : 'no'}: signatures by ${verified.signatures.join(' and ')}, ${verified.threshold} needed by its trust set${verified.ok ? '' : ` (${verified.detail})`}` : 'nothing offered'}`,
        `    install    ${s.outcome ? (s.outcome.state === 'installed' ? `installed ${r.release} (runs it from its next boot)` : `failed (${s.outcome.reason ?? 'other'}); runs ${s.firmware}`) : `not offered; runs ${s.firmware}`}`,
      ].join('\n');
    }),
    '',
    r.ok ? `Every logger verified two signatures against its trust set and installed ${r.release}.` : 'Not every logger installed: see above.',
    '',
  ];
  return lines.join('\n');
}
