// The `heliodor` signing tool's commands as plain functions (index.ts only wires them to commander),
// so that tests run them in-process. Release engineers sign offline: no command sends a private key
// anywhere, and none prints one.
import { createHash, generateKeyPairSync } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { access, chmod, mkdir, readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { pipeline } from 'node:stream/promises';
import type { SignatureAlgorithm } from '../../schemas/manifest';
import {
  canonicalManifest,
  decodeSignature,
  ManifestError,
  parsePublicKeyPem,
  parseSignedManifest,
  publicKeyOfPrivatePem,
  signManifest,
  verifyManifestSignature,
  type Manifest,
} from '../../server/images/manifest';
import { trustSetBodySchema, trustSetBytes, type TrustSetBody } from '../../server/images/trust';

/** A refusal the CLI prints as one line on stderr before exiting with status 1. */
export class CliError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'CliError';
  }
}

const fileProblems: Record<string, string> = {
  ENOENT: 'no such file',
  EISDIR: 'it is a directory',
  EACCES: 'permission denied',
  EPERM: 'permission denied',
};

function fileError(error: unknown, what: string, file: string): CliError {
  const code = (error as NodeJS.ErrnoException).code ?? '';
  return new CliError(`cannot read the ${what} ${file}: ${fileProblems[code] ?? (error as Error).message}`);
}

async function readInput(file: string, what: string): Promise<Buffer<ArrayBuffer>> {
  try {
    return await readFile(file);
  } catch (error) {
    throw fileError(error, what, file);
  }
}

/** SHA-256 and size of an image, read as a stream so large images never sit in memory. */
export async function digestImage(file: string): Promise<{ sha256: string; size: number }> {
  const hash = createHash('sha256');
  let size = 0;
  try {
    await pipeline(createReadStream(file), async (chunks: AsyncIterable<Buffer>) => {
      for await (const chunk of chunks) {
        hash.update(chunk);
        size += chunk.length;
      }
    });
  } catch (error) {
    throw fileError(error, 'image', file);
  }
  return { sha256: hash.digest('hex'), size };
}

/** Manifest bytes as the engineer saved them; a hint when npm's script banner ended up in the file. */
function readManifest(bytes: Buffer, file: string): Manifest {
  try {
    return parseSignedManifest(bytes);
  } catch (error) {
    if (error instanceof ManifestError && error.code === 'not_json' && /^\s*> /.test(bytes.toString('utf8'))) {
      throw new CliError(`${file}: the manifest is not JSON: it starts with npm's script banner; run \`npm run -s heliodor -- manifest …\` or use --out`);
    }
    if (error instanceof ManifestError) throw new CliError(`${file}: ${error.message}`);
    throw error;
  }
}

// ---------------------------------------------------------------------------------------------
// keys new

export type NewKeyOptions = { algorithm: SignatureAlgorithm; out: string; name?: string };
export type NewKeyResult = { keyId: string; algorithm: SignatureAlgorithm; privateKeyFile: string; publicKeyFile: string; report: string };

/** Makes a signing key pair: `<name>.private.pem` (PKCS#8, mode 0600) and `<name>.public.pem` (SPKI). */
export async function newSigningKey(options: NewKeyOptions): Promise<NewKeyResult> {
  const name = options.name ?? 'signing-key';
  if (!/^[A-Za-z0-9][A-Za-z0-9._-]*$/.test(name)) {
    throw new CliError(`--name must be a file name base of letters, digits, '.', '_' or '-', got '${name}'`);
  }
  const privateKeyFile = path.join(options.out, `${name}.private.pem`);
  const publicKeyFile = path.join(options.out, `${name}.public.pem`);
  for (const file of [privateKeyFile, publicKeyFile]) {
    const exists = await access(file).then(
      () => true,
      () => false,
    );
    if (exists) throw new CliError(`${file} already exists: an existing key is never overwritten; choose another --name or --out`);
  }

  const pair =
    options.algorithm === 'ed25519' ? generateKeyPairSync('ed25519') : generateKeyPairSync('ec', { namedCurve: 'prime256v1' });
  const privatePem = String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }));
  const publicPem = String(pair.publicKey.export({ type: 'spki', format: 'pem' }));
  const key = parsePublicKeyPem(publicPem);

  try {
    await mkdir(options.out, { recursive: true, mode: 0o700 });
    // 'wx' refuses to replace a file that appeared meanwhile; the explicit chmod does not rely on the umask.
    await writeFile(privateKeyFile, privatePem, { mode: 0o600, flag: 'wx' });
    await chmod(privateKeyFile, 0o600);
    await writeFile(publicKeyFile, key.pem, { mode: 0o644, flag: 'wx' });
  } catch (error) {
    throw new CliError(`cannot write the key files in ${options.out}: ${(error as Error).message}`);
  }
  const report = [
    `key id ${key.keyId} (${key.algorithm})`,
    `private key: ${privateKeyFile} (mode 0600: keep it offline, never upload it)`,
    `public key:  ${publicKeyFile} (register it in Heliodor under Signing keys)`,
  ].join('\n');
  return { keyId: key.keyId, algorithm: key.algorithm, privateKeyFile, publicKeyFile, report: `${report}\n` };
}

// ---------------------------------------------------------------------------------------------
// manifest

export type ManifestOptions = {
  image: string;
  model: string;
  version: string;
  boards: string;
  counter: string;
  issuedAt?: string;
  /** The clock, for tests; issued_at defaults to now, in whole seconds. */
  now?: Date;
};

const optionOfField: Record<string, string> = {
  'manifest.board_revisions': '--boards',
  'manifest.image_sha256': '--image',
  'manifest.image_size': '--image',
  'manifest.issued_at': '--issued-at',
  'manifest.model': '--model',
  'manifest.security_counter': '--counter',
  'manifest.version': '--version',
};

/** The canonical manifest text for an image (no trailing newline: these are the bytes to sign). */
export async function writeManifest(options: ManifestOptions): Promise<string> {
  if (!/^\d+$/.test(options.counter.trim())) {
    throw new CliError(`--counter must be the security counter, a whole number of 0 or more, got '${options.counter}'`);
  }
  const image = await digestImage(options.image);
  if (image.size === 0) throw new CliError(`--image: ${options.image} is empty`);
  const issuedAt = options.issuedAt ?? (options.now ?? new Date()).toISOString().replace(/\.\d{3}Z$/, 'Z');
  try {
    return canonicalManifest({
      board_revisions: options.boards.split(',').map((label) => label.trim()),
      format: 1,
      image_sha256: image.sha256,
      image_size: image.size,
      issued_at: issuedAt,
      model: options.model,
      security_counter: Number(options.counter.trim()),
      version: options.version,
    });
  } catch (error) {
    if (!(error instanceof ManifestError)) throw error;
    const first = error.errors[0];
    if (!first) throw new CliError(error.message);
    const option = optionOfField[first.path.replace(/\.\d+$/, '')] ?? first.path;
    const more = error.errors.length > 1 ? ` (and ${error.errors.length - 1} more)` : '';
    throw new CliError(`${option}: ${first.message}${more}`);
  }
}

// ---------------------------------------------------------------------------------------------
// sign

export type SignOptions = { key: string; manifest: string };

/** Base64 signature over the exact bytes of a canonical manifest file (with a final newline). */
export async function signManifestFile(options: SignOptions): Promise<string> {
  const bytes = await readInput(options.manifest, 'manifest');
  readManifest(bytes, options.manifest);
  const privatePem = (await readInput(options.key, 'private key')).toString('utf8');
  try {
    const signature = signManifest(bytes, privatePem);
    // Check our own work before a release engineer ships it.
    if (!verifyManifestSignature(bytes, signature, publicKeyOfPrivatePem(privatePem))) {
      throw new CliError('the new signature does not verify: the private key may be damaged');
    }
    return `${signature}\n`;
  } catch (error) {
    if (error instanceof ManifestError) throw new CliError(`${options.key}: ${error.message}`);
    throw error;
  }
}

// ---------------------------------------------------------------------------------------------
// verify

export type VerifyOptions = { key: string; signature: string; manifest: string; image?: string };

/** Checks canonical form, signature and (when given) the image; returns the one-line verdict or throws. */
export async function verifySignedManifest(options: VerifyOptions): Promise<string> {
  const bytes = await readInput(options.manifest, 'manifest');
  const manifest = readManifest(bytes, options.manifest);
  const keyText = (await readInput(options.key, 'public key')).toString('utf8');
  let key;
  try {
    key = parsePublicKeyPem(keyText);
  } catch (error) {
    if (error instanceof ManifestError && error.code === 'private_key_given') {
      throw new CliError(`${options.key} is a private key: verify with the public key (the .public.pem file)`);
    }
    if (error instanceof ManifestError) throw new CliError(`${options.key}: ${error.message}`);
    throw error;
  }
  const signatureText = await readInput(options.signature, 'signature');
  let good: boolean;
  try {
    good = verifyManifestSignature(bytes, decodeSignature(signatureText, key.algorithm), key);
  } catch (error) {
    if (error instanceof ManifestError) throw new CliError(`${options.signature}: ${error.message}`);
    throw error;
  }
  if (!good) {
    throw new CliError(`the signature in ${options.signature} does not match ${options.manifest} and key ${key.keyId} (${key.algorithm})`);
  }
  let imagePart = '';
  if (options.image) {
    const image = await digestImage(options.image);
    if (image.size !== manifest.image_size) {
      throw new CliError(`${options.image} is ${image.size} bytes but the manifest says ${manifest.image_size}`);
    }
    if (image.sha256 !== manifest.image_sha256) {
      throw new CliError(`${options.image} has SHA-256 ${image.sha256} but the manifest says ${manifest.image_sha256}`);
    }
    imagePart = `; image ${options.image} matches (${image.size} bytes, SHA-256 ${image.sha256})`;
  }
  return (
    `verified: ${options.manifest} is signed by key ${key.keyId} (${key.algorithm}): ` +
    `version ${manifest.version}, boards ${manifest.board_revisions.join(',')}, security counter ${manifest.security_counter}${imagePart}\n`
  );
}

// ---------------------------------------------------------------------------------------------
// push

export type PushOptions = {
  url: string;
  token?: string;
  image: string;
  manifest: string;
  signature: string;
  notes?: string;
  channel?: 'stable' | 'early';
  /** For tests and proxies; defaults to Node's global fetch. */
  fetch?: typeof fetch;
};

type CreatedRelease = { id: string; version: string; modelId: string; state: string; image: { sha256: string; size: number } };
type ProblemReply = { title?: string; detail?: string; status?: number; errors?: { path: string; message: string }[] };

/** Notes come from a file when --notes names one, otherwise they are the text itself. */
async function readNotes(notes: string): Promise<string> {
  try {
    return await readFile(notes, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENAMETOOLONG') return notes;
    throw fileError(error, 'release notes', notes);
  }
}

/**
 * Uploads a signed image as a draft release (POST <url>/api/releases, multipart: image, manifest,
 * signature, notes, channel) with an API token. Checks locally first what can be checked without the
 * console, so a mismatch is found before a large upload.
 */
export async function pushRelease(options: PushOptions): Promise<string> {
  const token = options.token ?? process.env.HELIODOR_TOKEN;
  if (!token) throw new CliError('--token is required (an API token with images:write; or set HELIODOR_TOKEN)');
  let endpoint: URL;
  try {
    endpoint = new URL(`${options.url.replace(/\/+$/, '')}/api/releases`);
    if (endpoint.protocol !== 'https:' && endpoint.protocol !== 'http:') throw new Error('not http');
  } catch {
    throw new CliError(`--url must be the console address, such as https://heliodor.example, got '${options.url}'`);
  }

  const manifestBytes = await readInput(options.manifest, 'manifest');
  const manifest = readManifest(manifestBytes, options.manifest);
  const signature = (await readInput(options.signature, 'signature')).toString('utf8').trim();
  const image = await digestImage(options.image);
  if (image.size !== manifest.image_size || image.sha256 !== manifest.image_sha256) {
    throw new CliError(`${options.image} is not the image ${options.manifest} describes (size or SHA-256 differs): nothing was uploaded`);
  }

  const form = new FormData();
  form.append('image', new Blob([await readInput(options.image, 'image')], { type: 'application/octet-stream' }), path.basename(options.image));
  form.append('manifest', new Blob([manifestBytes], { type: 'application/json' }), path.basename(options.manifest));
  form.append('signature', signature);
  if (options.notes !== undefined) form.append('notes', await readNotes(options.notes));
  if (options.channel !== undefined) form.append('channel', options.channel);

  const send = options.fetch ?? fetch;
  let response: Response;
  try {
    // No redirects: the token must reach only the console named by --url.
    response = await send(endpoint, {
      method: 'POST',
      headers: { Authorization: `Bearer ${token}`, Accept: 'application/json, application/problem+json' },
      body: form,
      redirect: 'manual',
    });
  } catch (error) {
    const cause = (error as { cause?: { code?: string; message?: string } }).cause;
    throw new CliError(`cannot reach the console at ${endpoint.origin}: ${cause?.code ?? cause?.message ?? (error as Error).message}`);
  }

  const text = await response.text();
  let body: unknown;
  try {
    body = text ? JSON.parse(text) : undefined;
  } catch {
    body = undefined;
  }
  if (response.status === 201 && body && typeof body === 'object') {
    const release = body as CreatedRelease;
    return (
      `created release ${release.version} (id ${release.id}) for model ${release.modelId}, state ${release.state}; ` +
      `image ${release.image?.sha256} (${release.image?.size} bytes)\n`
    );
  }
  if (response.status >= 300 && response.status < 400) {
    throw new CliError(`the console answered with a redirect (${response.status}) to ${response.headers.get('location') ?? '?'}: use that address as --url`);
  }
  const problem = (body && typeof body === 'object' ? body : {}) as ProblemReply;
  const fields = problem.errors?.length ? ` [${problem.errors.map((e) => `${e.path}: ${e.message}`).join('; ')}]` : '';
  const title = problem.title ?? response.statusText ?? 'refused';
  const detail = problem.detail ? `: ${problem.detail}` : '';
  throw new CliError(`upload refused (${response.status} ${title})${detail}${fields}`);
}

// ---------------------------------------------------------------------------------------------
// push --add-signature: one more signature on a draft

export type AddSignatureOptions = {
  url: string;
  token?: string;
  release: string;
  /** The signer's public key (.public.pem): names the key id and algorithm. */
  key: string;
  /** The base64 signature (from `heliodor sign`), as text. */
  signature: string;
  fetch?: typeof fetch;
};

/** POST <url>/api/releases/<id>/signatures with an API token (images:write). */
export async function addReleaseSignature(options: AddSignatureOptions): Promise<string> {
  const token = options.token ?? process.env.HELIODOR_TOKEN;
  if (!token) throw new CliError('--token is required (an API token with images:write; or set HELIODOR_TOKEN)');
  if (!/^[0-9a-f-]{36}$/.test(options.release)) throw new CliError(`--release must be the release id (a lowercase UUID), got '${options.release}'`);
  const keyText = (await readInput(options.key, 'public key')).toString('utf8');
  let key;
  try {
    key = parsePublicKeyPem(keyText);
  } catch (error) {
    if (error instanceof ManifestError) throw new CliError(`${options.key}: ${error.message}`);
    throw error;
  }
  const signature = options.signature.trim();
  if (!signature) throw new CliError('no signature: pipe `heliodor sign …` into this command, or pass --signature <file>');
  let endpoint: URL;
  try {
    endpoint = new URL(`${options.url.replace(/\/+$/, '')}/api/releases/${options.release}/signatures`);
  } catch {
    throw new CliError(`--url must be the console address, such as https://heliodor.example, got '${options.url}'`);
  }
  const send = options.fetch ?? fetch;
  let response: Response;
  try {
    response = await send(endpoint, {
      method: 'POST',
      headers: { Authorization: `Bearer ${token}`, 'Content-Type': 'application/json', Accept: 'application/json, application/problem+json' },
      body: JSON.stringify({ keyId: key.keyId, algorithm: key.algorithm, signature }),
      redirect: 'manual',
    });
  } catch (error) {
    throw new CliError(`cannot reach the console at ${endpoint.origin}: ${(error as Error).message}`);
  }
  const body = (await response.json().catch(() => ({}))) as {
    version?: string;
    signing?: { threshold: number; met: boolean; signedBy: { keyId: string }[] };
    title?: string;
    detail?: string;
  };
  if (response.status !== 200) throw new CliError(`signature refused (${response.status} ${body.title ?? response.statusText})${body.detail ? `: ${body.detail}` : ''}`);
  const s = body.signing;
  return `added key ${key.keyId}'s signature to release ${body.version}: ${s?.signedBy.length ?? '?'} of ${s?.threshold ?? '?'} keys${s?.met ? ', ready for its pilot' : ''}\n`;
}

// ---------------------------------------------------------------------------------------------
// trust sign: a signature over a pending trust set, made offline

export type TrustSignOptions = { key: string; set: string };

/**
 * Signs the canonical text of a pending trust set (copied from the console's trust set panel, or from
 * GET /api/models/:id/trust `pending.canonical`) and prints the body for
 * POST /api/models/:id/trust/signatures. The text must be exactly its RFC 8785 canonical form.
 */
export async function signTrustSetFile(options: TrustSignOptions): Promise<string> {
  const bytes = await readInput(options.set, 'trust set');
  let body: TrustSetBody;
  try {
    body = trustSetBodySchema.parse(JSON.parse(bytes.toString('utf8')));
  } catch {
    throw new CliError(`${options.set}: not a trust set (expected the canonical text the console shows for the pending set)`);
  }
  if (!trustSetBytes(body).equals(bytes)) {
    throw new CliError(`${options.set}: not the set's RFC 8785 canonical form (copy it exactly, without a final newline)`);
  }
  const privatePem = (await readInput(options.key, 'private key')).toString('utf8');
  try {
    const pub = publicKeyOfPrivatePem(privatePem);
    const signature = signManifest(bytes, privatePem);
    return `${JSON.stringify({ version: body.version, keyId: pub.keyId, algorithm: pub.algorithm, signature })}\n`;
  } catch (error) {
    if (error instanceof ManifestError) throw new CliError(`${options.key}: ${error.message}`);
    throw error;
  }
}
