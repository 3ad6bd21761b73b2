// A virtual logger: the reference client of the device API (DEVICE_API.md). It checks in on the
// server's timer, applies measurement profiles, downloads offered images with resumption, verifies
// them exactly as firmware does, reports each install state and reboots into the new version.
//
// The base URL, fetch, clock and randomness are injected, so API tests can drive loggers in-process
// with a simulated clock and a fixed seed.
//
// Choices where the contract is silent (firmware developers: this is the behaviour to copy):
// - Each install state is reported at once in a check-in of its own, so the console's funnel moves
//   as the install does; a report that could not be delivered (network, 429, 503) is kept and sent
//   with the next check-in, and only the latest state is kept (states only move forward).
// - The image is verified before "downloaded" is reported: "downloaded" means complete and trusted.
// - After reporting "installed" the logger reboots into the new version and checks in as soon as it
//   is up (a few seconds later), so the server confirms the install without waiting a whole interval.
// - The image URL must be on the server the logger checks in with; redirects are refused
//   (RFC 9124 §4.2.6, NET.REDIRECT).
// - 429 and 503 on a download end the attempt as a transient `connection` failure; the bytes already
//   received are kept and the download resumes when the offer comes again.
// - A 409 to a check-in that carried a report means the server refused the report (a release not
//   offered to this logger): the report is dropped, and the logger checks in again a minute later.
import { createHash } from 'node:crypto';
import semver from 'semver';
import { z } from 'zod';
import { ManifestError, parseSignedManifest, type Manifest, type SigningPublicKey } from '../../server/images/manifest';
import { acceptTrustSet, hasExpired, judgeThreshold, keysOfTrustSet, wireSignatureSchema, type TrustSetBody } from '../../server/images/trust';
import { chance, gaussian, pick, type Random } from './random';
import { PanelMeter, supplyBetweenCheckIns, typicalPanel, type BoardSupply, type Panel, type ResetReason, type Spot } from './readings';

// ---- The wire (DEVICE_API.md), as a client reads it: unknown fields are ignored. ----

const offerSchema = z.object({
  release: z.string().min(1),
  version: z.string().min(1),
  security_counter: z.number().int().nonnegative(),
  manifest: z.string().min(1),
  signature: z.string().min(1),
  key_id: z.string().min(1),
  algorithm: z.enum(['ed25519', 'ecdsa-p256-sha256']),
  /** Every signature of the release; older servers send only the single fields above. */
  signatures: z.array(wireSignatureSchema).optional(),
  image: z.object({
    url: z.string().min(1),
    sha256: z.string().regex(/^[0-9a-f]{64}$/),
    size: z.number().int().positive(),
  }),
});
export type Offer = z.infer<typeof offerSchema>;

const configSchema = z.object({
  version: z.number().int().nonnegative(),
  shunt_ohm: z.number(),
  max_current_a: z.number(),
  current_lsb_a: z.number(),
  calibration: z.number(),
  power_lsb_w: z.number(),
  bus_v_max: z.number(),
  temp_resolution_bits: z.number(),
  sample_interval_s: z.number(),
});
export type DeviceConfig = z.infer<typeof configSchema>;

export const checkInResponseSchema = z.object({
  server_time: z.string().min(1),
  next_check_in_s: z.number().int().positive(),
  config: configSchema.nullable(),
  offer: offerSchema.nullable(),
  /** The next version of the model's trust set; judged by acceptTrustSet, never trusted as it comes. */
  trust_set: z.unknown().optional(),
});
export type CheckInResponse = z.infer<typeof checkInResponseSchema>;

export type InstallState = 'downloading' | 'downloaded' | 'installing' | 'installed' | 'failed';
export type FailureReason = 'integrity' | 'signature' | 'storage' | 'connection' | 'unsupported' | 'low_supply' | 'other';
export type InstallReport = { release: string; state: InstallState; reason?: FailureReason; detail?: string };

export type CheckInRequest = {
  firmware: string;
  board: string;
  security_counter: number;
  uptime_s: number;
  reset_reason: ResetReason;
  resets_since_last: number;
  reset_counts?: Partial<Record<ResetReason, number>>;
  rssi_dbm: number;
  free_heap_b: number;
  supply_v: number;
  readings: ReturnType<PanelMeter['readings']>;
  config_version: number;
  report?: InstallReport;
  trust_version?: number;
};

// ---- Verification, exactly as firmware does it. Pure. ----

export type TrustAnchor = {
  /** The public keys the logger trusts: its trust set's, or those baked into the firmware. */
  trustedKeys: readonly SigningPublicKey[];
  /** How many of them must sign a manifest (its trust set's threshold; 1 without a trust set). */
  threshold?: number;
  /** The clock, for the manifest's `expires`. */
  now?: Date;
  /** The logger's board revision label. */
  board: string;
  /** The highest security counter the logger has accepted. */
  securityCounter: number;
  /** The version it runs now. */
  firmware: string;
  /** The model id, when the logger knows it; the manifest must name the same model. */
  modelId?: string | null;
};

export type Verdict = { ok: true; manifest: Manifest } | { ok: false; reason: FailureReason; detail: string };

const refuse = (reason: FailureReason, detail: string): Verdict => ({ ok: false, reason, detail: detail.slice(0, 200) });

/**
 * Decides whether a downloaded image may be installed. Only what is signed is trusted: the signature
 * is checked over the exact manifest bytes with a key the firmware already holds, then the image must
 * match the manifest's digest and size (RFC 9124 §4.3.4, §4.3.15), the manifest must be for this board
 * and model (§4.3.2), and its security counter must not be below the logger's (§4.3.1). The offer's
 * own fields must agree with the manifest, or the server is confused and nothing is installed.
 */
export function verifyImage(offer: Offer, image: Uint8Array, anchor: TrustAnchor): Verdict {
  // The threshold rule (server/images/trust.ts): signatures from `threshold` distinct trusted keys,
  // each counted once; an offer without the list carries its one signature in the single fields.
  const signatures = offer.signatures?.length ? offer.signatures : [{ key_id: offer.key_id, algorithm: offer.algorithm, signature: offer.signature }];
  const manifestBytes = Buffer.from(offer.manifest, 'base64');
  const threshold = anchor.threshold ?? 1;
  const verdict = judgeThreshold(manifestBytes, signatures, anchor.trustedKeys, threshold);
  if (!verdict.met) {
    const why = verdict.rejected.map((r) => `key ${r.keyId}: ${r.why}`).join('; ');
    return refuse('signature', `signed by ${verdict.signedBy.length} of the ${threshold} trusted keys needed${why ? ` (${why})` : ''}`);
  }

  let manifest: Manifest;
  try {
    manifest = parseSignedManifest(manifestBytes);
  } catch (error) {
    return refuse('unsupported', error instanceof Error ? error.message : 'the manifest cannot be read');
  }
  if (manifest.expires && hasExpired(manifest.expires, anchor.now ?? new Date())) return refuse('unsupported', `the manifest expired at ${manifest.expires}`);
  if (manifest.version !== offer.version) return refuse('integrity', `the offer says ${offer.version}, the manifest ${manifest.version}`);
  if (manifest.security_counter !== offer.security_counter) {
    return refuse('integrity', `the offer says security counter ${offer.security_counter}, the manifest ${manifest.security_counter}`);
  }
  if (manifest.image_sha256 !== offer.image.sha256 || manifest.image_size !== offer.image.size) {
    return refuse('integrity', 'the offered image is not the one the manifest names');
  }
  if (anchor.modelId && manifest.model !== anchor.modelId.toLowerCase()) return refuse('unsupported', `the manifest is for model ${manifest.model}`);
  if (!manifest.board_revisions.includes(anchor.board)) {
    return refuse('unsupported', `the manifest is for boards ${manifest.board_revisions.join(', ')}, not board ${anchor.board}`);
  }
  if (manifest.security_counter < anchor.securityCounter) {
    return refuse('unsupported', `security counter ${manifest.security_counter} is below this logger's ${anchor.securityCounter}`);
  }
  if (!semver.valid(anchor.firmware) || !semver.gt(manifest.version, anchor.firmware)) {
    return refuse('unsupported', `version ${manifest.version} is not newer than the running ${anchor.firmware}`);
  }
  if (image.length !== manifest.image_size) return refuse('integrity', `the image is ${image.length} bytes, the manifest says ${manifest.image_size}`);
  const digest = createHash('sha256').update(image).digest('hex');
  if (digest !== manifest.image_sha256) return refuse('integrity', `the image SHA-256 is ${digest.slice(0, 16)}…, the manifest says ${manifest.image_sha256.slice(0, 16)}…`);
  return { ok: true, manifest };
}

// ---- The virtual logger. ----

export type LoggerIdentity = {
  serial: string;
  token: string;
  board: string;
  firmware: string;
  securityCounter?: number;
  /** Known when the fleet registered the logger itself; a bench sheet names the model only. */
  modelId?: string | null;
  /** Where the panel is (defaults to the middle of Aldmere Vale). */
  spot?: Spot;
  panel?: Panel;
  /** How this logger's supply behaves, when not as its board revision's usually does (a sagging supply, an unstable board). */
  supply?: BoardSupply;
};

export type LoggerEvent =
  | { kind: 'check-in'; serial: string; status: number; offer: boolean }
  | { kind: 'backoff'; serial: string; status: number; retryAfterS: number }
  | { kind: 'report'; serial: string; report: InstallReport; delivered: boolean }
  | { kind: 'interrupted'; serial: string; release: string; have: number }
  | { kind: 'rebooted'; serial: string; firmware: string; reason: ResetReason }
  | { kind: 'drifted'; serial: string; firmware: string; scale: number }
  | { kind: 'trust'; serial: string; version: number; accepted: boolean; detail: string }
  | { kind: 'error'; serial: string; message: string };

export type LoggerEnvironment = {
  /** The server's origin, e.g. http://127.0.0.1:8080; all traffic goes there and nowhere else. */
  baseUrl: string;
  fetch?: typeof fetch;
  clock: () => Date;
  random: Random;
  trustedKeys: readonly SigningPublicKey[];
  /**
   * The model's trust set the logger was made with. When given, the logger verifies offers against it
   * (its keys and threshold) instead of `trustedKeys`, sends `trust_version`, and follows later sets.
   */
  trustSet?: TrustSetBody | null;
  /** Share of download attempts cut short part-way (0–1). */
  interruptRate?: number;
  /**
   * Share of installs that fail while writing the image (0–1), with a reason from integrity, storage, other;
   * or a function that gives the share for each offer when its install is written.
   */
  failRate?: number | ((offer: Offer) => number);
  /** Download attempts per offer before the logger gives up until the next check-in. */
  maxDownloadAttempts?: number;
  /**
   * Measurement drift: once a logger boots a release it installed, its current (and so its power and
   * energy) reads this many times the true value, as a release with a broken calibration constant
   * would make it (1 or absent: no drift).
   */
  drift?: number;
  onEvent?: (event: LoggerEvent) => void;
};

export type CheckInResult =
  | { ok: true; status: 200; response: CheckInResponse }
  | { ok: false; status: number; response: null; retryAfterS?: number; error?: string };

export type InstallOutcome = { state: 'installed' | 'failed'; reason?: FailureReason; detail?: string };

type Download = { release: string; sha256: string; etag: string | null; parts: Buffer[]; have: number };

const DEFAULT_RETRY_S = 60;
/** After accepting a trust set, the logger checks in again this soon for the next version. */
const TRUST_STEP_MS = 5_000;
/** From the installed report to the new version's first check-in: the reboot. */
const REBOOT_MS = 5_000;
const injectedFailures: readonly FailureReason[] = ['integrity', 'storage', 'other'];

export class VirtualLogger {
  readonly serial: string;
  readonly token: string;
  readonly board: string;
  readonly modelId: string | null;
  firmware: string;
  securityCounter: number;
  /** The measurement profile in use, once the server has sent one. */
  config: DeviceConfig | null = null;
  /** When the server wants to hear from the logger again. */
  nextCheckInAt: Date;
  /** The token was refused (401): the logger stops checking in. */
  refused = false;
  /** The latest install report not yet delivered. */
  pendingReport: InstallReport | null = null;
  /** The trust set the logger holds (null: it trusts the keys baked into its firmware, one signature each). */
  trust: TrustSetBody | null;
  /** Trust sets it was sent and refused, with why (a forged or out-of-order set). */
  readonly refusedTrustSets: { version: unknown; detail: string }[] = [];
  readonly meter: PanelMeter;

  private readonly env: Required<Omit<LoggerEnvironment, 'onEvent' | 'trustSet'>> & Pick<LoggerEnvironment, 'onEvent' | 'trustSet'>;
  private readonly origin: string;
  private bootAt: Date;
  private lastCheckInAt: Date | null = null;
  private resetReason: ResetReason = 'power_on';
  private resetCounts: Partial<Record<ResetReason, number>> = {};
  private readonly rssiBase: number;
  private download_: Download | null = null;
  private rebootInto: { version: string; securityCounter: number; at: Date } | null = null;
  private installing = false;
  private supplyV = 5;
  private readonly supply: BoardSupply | undefined;

  constructor(identity: LoggerIdentity, env: LoggerEnvironment) {
    this.serial = identity.serial;
    this.token = identity.token;
    this.board = identity.board;
    this.modelId = identity.modelId ?? null;
    this.firmware = identity.firmware;
    this.securityCounter = identity.securityCounter ?? 0;
    this.supply = identity.supply;
    this.env = {
      fetch: globalThis.fetch.bind(globalThis),
      interruptRate: 0,
      failRate: 0,
      maxDownloadAttempts: 8,
      drift: 1,
      ...env,
    };
    this.origin = new URL(env.baseUrl).origin;
    this.trust = env.trustSet ?? null;
    const now = env.clock();
    // The logger has been running a while when the simulation starts.
    this.bootAt = new Date(now.getTime() - Math.floor(env.random() * 6 * 3600) * 1000);
    this.meter = new PanelMeter({
      panel: identity.panel ?? typicalPanel(pick(env.random, [20, 50, 100])),
      spot: identity.spot ?? { latitude: 52.14, longitude: -1.98 },
      random: env.random,
      at: this.bootAt,
    });
    this.meter.advance(now);
    this.rssiBase = Math.round(-60 - env.random() * 25);
    this.nextCheckInAt = now;
  }

  /** Whether the logger's timer has run out at `now`. */
  due(now: Date): boolean {
    return !this.refused && !this.installing && now.getTime() >= this.nextCheckInAt.getTime();
  }

  /** The version this logger is waiting to reboot into, if an install finished. */
  get awaitingReboot(): string | null {
    return this.rebootInto?.version ?? null;
  }

  private emit(event: LoggerEvent): void {
    this.env.onEvent?.(event);
  }

  private url(pathOrUrl: string): URL | null {
    const url = new URL(pathOrUrl, this.origin);
    return url.origin === this.origin ? url : null;
  }

  /** Boots into the installed image, and counts the resets the board had since the last check-in. */
  private liveUntil(now: Date): void {
    if (this.rebootInto && now.getTime() >= this.rebootInto.at.getTime()) {
      const at = this.rebootInto.at;
      this.meter.advance(at);
      this.meter.reboot();
      this.firmware = this.rebootInto.version;
      if (this.env.drift !== 1) {
        this.meter.currentScale = this.env.drift;
        this.emit({ kind: 'drifted', serial: this.serial, firmware: this.firmware, scale: this.env.drift });
      }
      this.securityCounter = Math.max(this.securityCounter, this.rebootInto.securityCounter);
      this.bootAt = at;
      this.resetReason = 'software';
      this.resetCounts.software = (this.resetCounts.software ?? 0) + 1;
      this.rebootInto = null;
      this.emit({ kind: 'rebooted', serial: this.serial, firmware: this.firmware, reason: 'software' });
    }
    const since = this.lastCheckInAt ?? now;
    const hours = Math.max(0, (now.getTime() - since.getTime()) / 3_600_000);
    const { supplyV, resets } = supplyBetweenCheckIns(this.board, hours, this.env.random, this.supply);
    this.supplyV = supplyV;
    const count = Object.values(resets).reduce((a, b) => a + (b ?? 0), 0);
    if (count > 0) {
      // The last of these resets happened somewhere in the interval; energy counts from there.
      const at = new Date(since.getTime() + this.env.random() * (now.getTime() - since.getTime()));
      this.meter.advance(at);
      this.meter.reboot();
      this.bootAt = at;
      this.resetReason = resets.brownout ? 'brownout' : 'watchdog';
      for (const [reason, n] of Object.entries(resets)) {
        const r = reason as ResetReason;
        this.resetCounts[r] = (this.resetCounts[r] ?? 0) + (n ?? 0);
      }
      this.emit({ kind: 'rebooted', serial: this.serial, firmware: this.firmware, reason: this.resetReason });
    }
    this.meter.advance(now);
  }

  /** The check-in body at `now` (advances the panel and board to `now`). */
  checkInBody(now: Date): CheckInRequest {
    this.liveUntil(now);
    const resets = Object.values(this.resetCounts).reduce((a, b) => a + (b ?? 0), 0);
    const body: CheckInRequest = {
      firmware: this.firmware,
      board: this.board,
      security_counter: this.securityCounter,
      uptime_s: Math.max(0, Math.floor((now.getTime() - this.bootAt.getTime()) / 1000)),
      reset_reason: this.resetReason,
      resets_since_last: resets,
      rssi_dbm: Math.max(-120, Math.min(0, Math.round(gaussian(this.env.random, this.rssiBase, 3)))),
      free_heap_b: Math.max(0, Math.round(gaussian(this.env.random, 150_000, 4_000))),
      supply_v: this.supplyV,
      readings: this.meter.readings(this.config),
      config_version: this.config?.version ?? 0,
    };
    if (resets > 0) body.reset_counts = { ...this.resetCounts };
    if (this.pendingReport) body.report = this.pendingReport;
    if (this.trust) body.trust_version = this.trust.version;
    return body;
  }

  /**
   * POST /api/device/v1/check-in. Honours next_check_in_s, and Retry-After on 429 and 503; applies a
   * measurement profile; a 401 stops the logger. Never throws: failures come back as a status
   * (0 for no answer at all) and an `error` event.
   */
  async checkIn(now: Date = this.env.clock()): Promise<CheckInResult> {
    const body = this.checkInBody(now);
    const sentReport = this.pendingReport;
    const url = this.url('/api/device/v1/check-in')!;
    let res: Response;
    try {
      res = await this.env.fetch(url, {
        method: 'POST',
        headers: { Authorization: `Bearer ${this.token}`, 'Content-Type': 'application/json', Accept: 'application/json' },
        body: JSON.stringify(body),
        redirect: 'error',
      });
    } catch (error) {
      return this.failed(now, 0, `check-in failed: ${(error as Error).message}`);
    }
    // Resets are counted "since the previous check-in" once the server has heard them (any answer).
    if (res.status === 200) {
      let json: unknown;
      try {
        json = await res.json();
      } catch {
        return this.failed(now, 200, 'check-in answered 200 with a body that is not JSON');
      }
      const parsed = checkInResponseSchema.safeParse(json);
      if (!parsed.success) {
        return this.failed(now, 200, `check-in answer breaks the contract: ${parsed.error.issues.map((i) => `${i.path.join('.')} ${i.message}`).join('; ')}`);
      }
      const answer = parsed.data;
      this.lastCheckInAt = now;
      this.resetCounts = {};
      if (sentReport && this.pendingReport === sentReport) this.pendingReport = null;
      if (sentReport) this.emit({ kind: 'report', serial: this.serial, report: sentReport, delivered: true });
      if (answer.config) this.config = answer.config;
      this.nextCheckInAt = new Date(now.getTime() + answer.next_check_in_s * 1000);
      if (answer.trust_set !== undefined && this.followTrustSet(answer.trust_set)) {
        // One version per check-in: come back soon for the next one before acting on any offer.
        this.nextCheckInAt = new Date(now.getTime() + TRUST_STEP_MS);
      }
      this.emit({ kind: 'check-in', serial: this.serial, status: 200, offer: answer.offer !== null });
      return { ok: true, status: 200, response: answer };
    }
    await res.body?.cancel().catch(() => undefined);
    if (res.status === 429 || res.status === 503) {
      const retryAfterS = retryAfterSeconds(res.headers.get('retry-after'));
      if (retryAfterS === null) return this.failed(now, res.status, `${res.status} without a usable Retry-After`);
      this.nextCheckInAt = new Date(now.getTime() + retryAfterS * 1000);
      this.emit({ kind: 'backoff', serial: this.serial, status: res.status, retryAfterS });
      return { ok: false, status: res.status, response: null, retryAfterS };
    }
    if (res.status === 409 && sentReport) {
      // The report names a release this logger was not offered (DEVICE_API.md, "Install report"): it is
      // dropped, or every later check-in would carry it and be refused again.
      if (this.pendingReport === sentReport) this.pendingReport = null;
      return this.failed(now, 409, `check-in refused the report on release ${sentReport.release} (409); the report is dropped`);
    }
    if (res.status === 401) this.refused = true;
    return this.failed(now, res.status, `check-in answered ${res.status}`);
  }

  /**
   * A trust set the server sent: accepted only by the acceptance rule (server/images/trust.ts) against
   * the set the logger holds — the next version, signed by the threshold of its CURRENT keys. Returns
   * whether it was accepted.
   */
  followTrustSet(candidate: unknown): boolean {
    if (!this.trust) return false;
    const verdict = acceptTrustSet(this.trust, candidate);
    const version = (candidate as { version?: unknown } | null)?.version;
    if (!verdict.ok) {
      this.refusedTrustSets.push({ version, detail: verdict.detail });
      this.emit({ kind: 'trust', serial: this.serial, version: Number(version), accepted: false, detail: verdict.detail });
      return false;
    }
    this.trust = verdict.set;
    this.emit({ kind: 'trust', serial: this.serial, version: verdict.set.version, accepted: true, detail: `signed by ${verdict.signedBy.join(', ')}` });
    return true;
  }

  private failed(now: Date, status: number, message: string): CheckInResult {
    this.nextCheckInAt = new Date(now.getTime() + DEFAULT_RETRY_S * 1000);
    this.emit({ kind: 'error', serial: this.serial, message: `${this.serial}: ${message}` });
    return { ok: false, status, response: null, error: message };
  }

  /** Sends an install report in a check-in of its own (kept for the next check-in if it cannot be delivered). */
  async report(report: InstallReport): Promise<boolean> {
    this.pendingReport = report;
    const result = await this.checkIn(this.env.clock());
    const delivered = result.ok;
    if (!delivered) this.emit({ kind: 'report', serial: this.serial, report, delivered: false });
    return delivered;
  }

  /** Whether firmware would act on this offer now. */
  wants(offer: Offer | null): offer is Offer {
    return offer !== null && this.rebootInto === null && !this.installing && offer.version !== this.firmware;
  }

  /**
   * Due check-in, and the install when an offer comes with it: what firmware does when its timer fires.
   * Returns the outcome of an install, or null when there was none.
   */
  async cycle(now: Date = this.env.clock()): Promise<InstallOutcome | null> {
    if (!this.due(now)) return null;
    const result = await this.checkIn(now);
    if (!result.ok || !this.wants(result.response.offer)) return null;
    // Catching up on trust sets first: the offer may be signed by keys the next set brings.
    if (result.response.trust_set !== undefined) return null;
    return this.install(result.response.offer);
  }

  /**
   * GET the image, resuming after interruptions: the bytes received are kept, and the next request
   * asks for the rest with `Range: bytes=<have>-` and `If-Range: <etag>` (RFC 9110 §14.2, §13.1.5).
   * A 206 must continue exactly where the logger stopped; a 200 is a whole new image (the old bytes
   * are dropped); a 416 starts over.
   */
  async download(offer: Offer): Promise<{ ok: true; bytes: Buffer } | { ok: false; reason: FailureReason; detail: string }> {
    const url = this.url(offer.image.url);
    if (!url) return { ok: false, reason: 'other', detail: 'the image URL points away from the server this logger checks in with' };
    const size = offer.image.size;
    let d = this.download_;
    if (!d || d.release !== offer.release || d.sha256 !== offer.image.sha256) {
      d = { release: offer.release, sha256: offer.image.sha256, etag: null, parts: [], have: 0 };
      this.download_ = d;
    }
    const restart = (dl: Download) => {
      dl.parts = [];
      dl.have = 0;
      dl.etag = null;
    };
    for (let attempt = 1; attempt <= this.env.maxDownloadAttempts; attempt++) {
      if (d.have === size) break;
      const headers: Record<string, string> = { Authorization: `Bearer ${this.token}` };
      const resuming = d.have > 0;
      if (resuming) {
        headers.Range = `bytes=${d.have}-`;
        if (d.etag) headers['If-Range'] = d.etag;
      }
      let res: Response;
      try {
        res = await this.env.fetch(url, { headers, redirect: 'error' });
      } catch (error) {
        this.emit({ kind: 'interrupted', serial: this.serial, release: offer.release, have: d.have });
        continue;
      }
      if (res.status === 404) {
        await res.body?.cancel().catch(() => undefined);
        return { ok: false, reason: 'connection', detail: 'the image is no longer offered (404)' };
      }
      if (res.status === 429 || res.status === 503) {
        await res.body?.cancel().catch(() => undefined);
        return { ok: false, reason: 'connection', detail: `the server is busy (${res.status}); will resume` };
      }
      if (res.status === 416) {
        await res.body?.cancel().catch(() => undefined);
        this.emit({ kind: 'error', serial: this.serial, message: `${this.serial}: 416 for bytes=${d.have}- of a ${size}-byte image` });
        restart(d);
        continue;
      }
      let expected: number;
      if (res.status === 206) {
        const range = parseContentRange(res.headers.get('content-range'));
        if (!range || range.start !== d.have || range.total !== size) {
          await res.body?.cancel().catch(() => undefined);
          this.emit({ kind: 'error', serial: this.serial, message: `${this.serial}: 206 with Content-Range ${res.headers.get('content-range')} for bytes=${d.have}-` });
          restart(d);
          continue;
        }
        expected = range.end - range.start + 1;
      } else if (res.status === 200) {
        // Either a first request, or the image changed under us (If-Range did not match): start afresh.
        if (resuming) this.emit({ kind: 'error', serial: this.serial, message: `${this.serial}: resumption refused, whole image sent again` });
        restart(d);
        expected = size;
      } else {
        await res.body?.cancel().catch(() => undefined);
        this.emit({ kind: 'error', serial: this.serial, message: `${this.serial}: image download answered ${res.status}` });
        return { ok: false, reason: 'connection', detail: `image download answered ${res.status}` };
      }
      const etag = res.headers.get('etag');
      // A weak validator must not be sent in If-Range (RFC 9110 §13.1.5).
      d.etag = etag && !etag.startsWith('W/') ? etag : null;

      const cutAfter = chance(this.env.random, this.env.interruptRate) ? Math.floor(this.env.random() * expected) : Infinity;
      const got = await readBody(res, cutAfter, d);
      if (d.have > size) {
        restart(d);
        return { ok: false, reason: 'integrity', detail: `the server sent more than the ${size} bytes offered` };
      }
      if (got < expected) this.emit({ kind: 'interrupted', serial: this.serial, release: offer.release, have: d.have });
    }
    if (d.have !== size) return { ok: false, reason: 'connection', detail: `download stopped at ${d.have} of ${size} bytes; will resume` };
    const bytes = Buffer.concat(d.parts);
    this.download_ = null;
    return { ok: true, bytes };
  }

  /** verifyImage with this logger's own trust anchor. */
  verify(offer: Offer, bytes: Uint8Array): Verdict {
    return verifyImage(offer, bytes, {
      trustedKeys: this.trust ? keysOfTrustSet(this.trust) : this.env.trustedKeys,
      threshold: this.trust?.threshold ?? 1,
      now: this.env.clock(),
      board: this.board,
      securityCounter: this.securityCounter,
      firmware: this.firmware,
      modelId: this.modelId,
    });
  }

  /**
   * The whole install: downloading → (download, verify) → downloaded → installing → installed, or
   * failed with a reason. The logger runs the new version from its next check-in.
   */
  async install(offer: Offer): Promise<InstallOutcome> {
    if (this.installing) return { state: 'failed', reason: 'other', detail: 'an install is already running' };
    this.installing = true;
    try {
      const fail = async (reason: FailureReason, detail: string): Promise<InstallOutcome> => {
        await this.report({ release: offer.release, state: 'failed', reason, detail: detail.slice(0, 200) });
        return { state: 'failed', reason, detail };
      };
      await this.report({ release: offer.release, state: 'downloading' });
      const downloaded = await this.download(offer);
      if (!downloaded.ok) return fail(downloaded.reason, downloaded.detail);
      const verdict = this.verify(offer, downloaded.bytes);
      if (!verdict.ok) return fail(verdict.reason, verdict.detail);
      await this.report({ release: offer.release, state: 'downloaded' });
      await this.report({ release: offer.release, state: 'installing' });
      const failRate = typeof this.env.failRate === 'function' ? this.env.failRate(offer) : this.env.failRate;
      if (chance(this.env.random, failRate)) {
        const reason = pick(this.env.random, injectedFailures);
        const detail = { integrity: 'the written image read back with a different SHA-256', storage: 'writing the update slot failed', other: 'the bootloader refused the new slot' }[reason as 'integrity' | 'storage' | 'other'];
        return fail(reason, `${detail} (simulated)`);
      }
      const now = this.env.clock();
      const bootAt = new Date(now.getTime() + REBOOT_MS);
      this.rebootInto = { version: verdict.manifest.version, securityCounter: verdict.manifest.security_counter, at: bootAt };
      await this.report({ release: offer.release, state: 'installed' });
      // Firmware keeps no timer across a reboot: it checks in as soon as the new version is up.
      this.nextCheckInAt = bootAt;
      return { state: 'installed' };
    } finally {
      this.installing = false;
    }
  }
}

/** Reads a response body into the download, stopping after `cutAfter` bytes (a simulated dropped link). */
async function readBody(res: Response, cutAfter: number, d: Download): Promise<number> {
  let got = 0;
  const reader = res.body?.getReader();
  if (!reader) return 0;
  try {
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      const room = cutAfter - got;
      const chunk = Buffer.from(value.buffer, value.byteOffset, value.byteLength);
      const keep = room < chunk.length ? chunk.subarray(0, Math.max(0, room)) : chunk;
      if (keep.length > 0) {
        d.parts.push(Buffer.from(keep));
        d.have += keep.length;
        got += keep.length;
      }
      if (got >= cutAfter) {
        await reader.cancel().catch(() => undefined);
        break;
      }
    }
  } catch {
    // The link dropped: what arrived is kept.
  }
  return got;
}

/** `Content-Range: bytes a-b/n` (RFC 9110 §14.4), or null when it is anything else. */
export function parseContentRange(value: string | null): { start: number; end: number; total: number } | null {
  const m = value ? /^bytes (\d+)-(\d+)\/(\d+)$/.exec(value.trim()) : null;
  if (!m) return null;
  const [start, end, total] = [Number(m[1]), Number(m[2]), Number(m[3])];
  if (![start, end, total].every(Number.isSafeInteger) || end < start || total <= end) return null;
  return { start, end, total };
}

/** Retry-After as delay-seconds (RFC 9110 §10.2.3); an HTTP-date is not sent by this server. */
export function retryAfterSeconds(value: string | null): number | null {
  if (value === null || !/^\d+$/.test(value.trim())) return null;
  const s = Number(value.trim());
  return Number.isSafeInteger(s) ? Math.max(1, s) : null;
}
