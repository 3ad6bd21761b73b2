// The signing CLI end to end against a listening console: keys new → manifest → sign → verify → push.
// The CLI's own functions run in-process (scripts/cli/commands.ts); the console is the
// real app on its own port, reached over HTTP with an API token.
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { addReleaseSignature, CliError, newSigningKey, pushRelease, signManifestFile, signTrustSetFile, verifySignedManifest, writeManifest } from '../../scripts/cli/commands';
import { parsePublicKeyPem } from '../../server/images/manifest';
import { demoModel, storeEntries } from './release-fixtures';

let t: TestApp;
let base: string;
let work: string;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  base = await t.listen();
  work = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-cli-'));
});
afterAll(async () => {
  fs.rmSync(work, { recursive: true, force: true });
  await t.close();
});

async function apiToken(scopes: string[]) {
  const admin = await t.signedIn('admin', 'CLI Admin');
  const res = await admin.post('/api/tokens').set(csrf).send({ name: `CI ${scopes.join(' ')}`, scopes, expiresAt: '2099-01-01T00:00:00Z' });
  expect(res.status).toBe(201);
  return res.body.token as string;
}

test.each([
  ['ed25519', '2.4.0'],
  ['ecdsa-p256-sha256', '2.4.1'],
] as const)('when a release engineer signs a %s manifest offline and pushes it with an images:write token, then a draft is created; pushing again is 409', async (algorithm, version) => {
  const dir = path.join(work, algorithm);
  const token = await apiToken(['images:write']);
  const key = await newSigningKey({ algorithm, out: path.join(dir, 'keys'), name: 'build' });
  expect((fs.statSync(key.privateKeyFile).mode & 0o777).toString(8)).toBe('600');

  const admin = await t.signedIn('admin', 'CLI Admin');
  const registered = await admin.post('/api/keys').set(csrf).send({ name: `CLI ${algorithm}`, publicKeyPem: fs.readFileSync(key.publicKeyFile, 'utf8') });
  expect(registered.status).toBe(201);
  expect(registered.body.keyId).toBe(key.keyId);

  const model = await demoModel();
  const imageFile = path.join(dir, 'fw.bin');
  const image = crypto.randomBytes(20_000);
  fs.writeFileSync(imageFile, image);
  const manifestFile = path.join(dir, 'manifest.json');
  fs.writeFileSync(manifestFile, await writeManifest({ image: imageFile, model: model.id, version, boards: 'B,C', counter: '5' }));
  const signatureFile = path.join(dir, 'manifest.sig');
  fs.writeFileSync(signatureFile, await signManifestFile({ key: key.privateKeyFile, manifest: manifestFile }));
  expect(await verifySignedManifest({ key: key.publicKeyFile, signature: signatureFile, manifest: manifestFile, image: imageFile })).toMatch(/^verified: /);

  const out = await pushRelease({ url: base, token, image: imageFile, manifest: manifestFile, signature: signatureFile, notes: 'Field trial build for Aldmere Vale.' });
  const sha256 = crypto.createHash('sha256').update(image).digest('hex');
  expect(out).toContain(`created release ${version}`);
  expect(out).toContain('state draft');
  expect(out).toContain(sha256);
  expect(storeEntries(t)).toContain(sha256);

  const list = await admin.get('/api/releases').query({ modelId: model.id });
  const row = list.body.rows.find((r: { version: string }) => r.version === version);
  const detail = await admin.get(`/api/releases/${row.id}`);
  expect(detail.body).toMatchObject({ state: 'draft', boards: ['B', 'C'], securityCounter: 5, notes: 'Field trial build for Aldmere Vale.', key: { keyId: key.keyId }, createdBy: { name: `CI images:write` } });

  const entries = storeEntries(t);
  await expect(pushRelease({ url: base, token, image: imageFile, manifest: manifestFile, signature: signatureFile })).rejects.toThrow(/upload refused \(409/);
  expect(storeEntries(t)).toEqual(entries);
});

test('when the token only reads the fleet, then the push is refused with 403 and nothing is stored', async () => {
  const token = await apiToken(['fleet:read']);
  const dir = path.join(work, 'reader');
  const key = await newSigningKey({ algorithm: 'ed25519', out: dir, name: 'reader' });
  const imageFile = path.join(dir, 'fw.bin');
  fs.writeFileSync(imageFile, crypto.randomBytes(1000));
  const manifestFile = path.join(dir, 'manifest.json');
  fs.writeFileSync(manifestFile, await writeManifest({ image: imageFile, model: (await demoModel()).id, version: '2.9.0', boards: 'A', counter: '5' }));
  const signatureFile = path.join(dir, 'manifest.sig');
  fs.writeFileSync(signatureFile, await signManifestFile({ key: key.privateKeyFile, manifest: manifestFile }));
  const entries = storeEntries(t);
  await expect(pushRelease({ url: base, token, image: imageFile, manifest: manifestFile, signature: signatureFile })).rejects.toThrow(/upload refused \(403/);
  expect(storeEntries(t)).toEqual(entries);
});

// The threshold rule (docs/SOURCES.md §6, TUF: a role is signed by a threshold of distinct keys, each
// counted once) through the CLI: a second key's signature added to a draft with push --add-signature,
// and a pending trust set signed offline with trust sign by a key of the version before.
test('when a second key signs offline and push --add-signature adds it, then the draft meets a 2-of rule; trust sign signs the pending set the console accepts', async () => {
  const dir = path.join(work, 'threshold');
  const token = await apiToken(['images:write']);
  const admin = await t.signedIn('admin', 'CLI Admin');
  const first = await newSigningKey({ algorithm: 'ed25519', out: path.join(dir, 'keys'), name: 'first' });
  const second = await newSigningKey({ algorithm: 'ecdsa-p256-sha256', out: path.join(dir, 'keys'), name: 'second' });
  for (const [name, key] of [['CLI first', first], ['CLI second', second]] as const) {
    expect((await admin.post('/api/keys').set(csrf).send({ name, publicKeyPem: fs.readFileSync(key.publicKeyFile, 'utf8') })).status).toBe(201);
  }
  const model = await demoModel();
  expect((await admin.patch(`/api/models/${model.id}`).set(csrf).send({ signingThreshold: 2 })).status).toBe(200);

  const imageFile = path.join(dir, 'fw.bin');
  fs.writeFileSync(imageFile, crypto.randomBytes(12_000));
  const manifestFile = path.join(dir, 'manifest.json');
  fs.writeFileSync(manifestFile, await writeManifest({ image: imageFile, model: model.id, version: '2.6.0', boards: 'B,C', counter: '6' }));
  const firstSig = path.join(dir, 'first.sig');
  fs.writeFileSync(firstSig, await signManifestFile({ key: first.privateKeyFile, manifest: manifestFile }));
  await pushRelease({ url: base, token, image: imageFile, manifest: manifestFile, signature: firstSig });
  const release = (await admin.get('/api/releases')).body.rows.find((r: { version: string }) => r.version === '2.6.0');
  expect((await admin.get(`/api/releases/${release.id}`)).body.signing).toMatchObject({ threshold: 2, met: false });

  // heliodor sign … | heliodor push --add-signature --release <id> --key second.public.pem
  const secondSig = await signManifestFile({ key: second.privateKeyFile, manifest: manifestFile });
  const added = await addReleaseSignature({ url: base, token, release: release.id, key: second.publicKeyFile, signature: secondSig });
  expect(added).toBe(`added key ${second.keyId}'s signature to release 2.6.0: 2 of 2 keys, ready for its pilot\n`);
  const signing = (await admin.get(`/api/releases/${release.id}`)).body.signing;
  expect(signing).toMatchObject({ threshold: 2, met: true });
  expect(signing.signedBy.map((k: { keyId: string }) => k.keyId).sort()).toEqual([first.keyId, second.keyId].sort());
  // The same key again counts once (TUF): the draft keeps 2 of 2, never a third signature.
  await expect(addReleaseSignature({ url: base, token, release: release.id, key: second.publicKeyFile, signature: secondSig })).resolves.toContain('2 of 2 keys');

  // trust sign: the pending set's canonical text, signed by a key of the version before.
  const view = (await admin.get(`/api/models/${model.id}/trust`)).body;
  expect(view.pending).not.toBeNull();
  const previous: string[] = JSON.parse(view.current.canonical).keys.map((k: { key_id: string }) => k.key_id);
  const keyFiles = fs.readdirSync(work, { recursive: true, encoding: 'utf8' }).filter((f) => f.endsWith('.public.pem'));
  const signerFile = keyFiles.map((f) => path.join(work, f)).find((f) => previous.includes(parsePublicKeyPem(fs.readFileSync(f, 'utf8')).keyId))!;
  expect(signerFile).toBeDefined();
  const setFile = path.join(dir, `trust-set-v${view.pending.version}.json`);
  fs.writeFileSync(setFile, `${view.pending.canonical}\n`);
  // RFC 8785 leaves no whitespace outside strings: a final newline is another text, refused before signing.
  await expect(signTrustSetFile({ key: signerFile.replace('.public.pem', '.private.pem'), set: setFile })).rejects.toThrow(CliError);
  fs.writeFileSync(setFile, view.pending.canonical);
  const body = JSON.parse(await signTrustSetFile({ key: signerFile.replace('.public.pem', '.private.pem'), set: setFile }));
  expect(body).toMatchObject({ version: view.pending.version, keyId: parsePublicKeyPem(fs.readFileSync(signerFile, 'utf8')).keyId });
  const signed = await admin.post(`/api/models/${model.id}/trust/signatures`).set(csrf).send(body);
  expect(signed.status).toBe(200);
  expect(signed.body.pending).toBeNull();
  expect(signed.body.current).toMatchObject({ version: view.pending.version, threshold: 2 });
});
