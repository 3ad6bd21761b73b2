// Example requests and answers for the console's Device API page (Settings → Device API), in the
// demo scenario of PRODUCT.md: an FL-2 field logger on board B at Aldmere Village Hall. Pure data; a
// unit test parses each example with the schemas that validate the real requests.
import type { CheckInRequest, CheckInResponse } from '../schemas/device';

export const exampleToken = 'hlt_Zk3v9QeR1tYw2uIo8pAs7dFg6hJk5lZx4cVb3nMq0Wz';
export const exampleReleaseId = '8a1c2d3e-4f50-4a6b-8c7d-9e0f1a2b3c4d';
export const exampleImageSha256 = '5f0c6b8e1d2a3c4b5a69788796a5b4c3d2e1f0a9b8c7d6e5f4a3b2c1d0e9f8a7';
export const exampleImageSize = 412_672;

export const exampleCheckIn: CheckInRequest = {
  firmware: '2.3.1',
  board: 'B',
  security_counter: 4,
  uptime_s: 86_412,
  reset_reason: 'power_on',
  resets_since_last: 0,
  rssi_dbm: -67,
  free_heap_b: 148_224,
  supply_v: 5.08,
  readings: { bus_v: 18.42, current_a: 2.104, power_w: 38.76, energy_wh: 412.9, temp_c: 24.5 },
  config_version: 2,
};

export const exampleCheckInWithReport: CheckInRequest = {
  ...exampleCheckIn,
  report: { release: exampleReleaseId, state: 'downloaded' },
};

export const exampleManifest = JSON.stringify({
  board_revisions: ['B', 'C'],
  format: 1,
  image_sha256: exampleImageSha256,
  image_size: exampleImageSize,
  issued_at: '2026-11-30T10:00:00Z',
  model: '3f2b8c1e-5d4a-4e6b-9c7d-1a2b3c4d5e6f',
  security_counter: 5,
  version: '2.4.0',
});

function base64(text: string): string {
  // btoa exists in browsers and Node 16+; the manifest is ASCII.
  return globalThis.btoa(text);
}

export const exampleAnswer: CheckInResponse = {
  server_time: '2026-12-01T11:42:07Z',
  next_check_in_s: 873,
  config: null,
  offer: {
    release: exampleReleaseId,
    version: '2.4.0',
    security_counter: 5,
    manifest: base64(exampleManifest),
    signature: 'mT3c…(88 base64 characters: 64 bytes)…Aw==',
    key_id: '9c1e4b7a2d5f8e03',
    algorithm: 'ed25519',
    signatures: [
      { key_id: '9c1e4b7a2d5f8e03', algorithm: 'ed25519', signature: 'mT3c…(88 base64 characters: 64 bytes)…Aw==' },
      { key_id: '41d07a6c3e9b2f58', algorithm: 'ed25519', signature: 'Qe8v…(88 base64 characters: 64 bytes)…Cg==' },
    ],
    image: { url: `/api/device/v1/images/${exampleImageSha256}`, sha256: exampleImageSha256, size: exampleImageSize },
  },
};

export const exampleQuietAnswer: CheckInResponse = { server_time: '2026-12-01T11:57:01Z', next_check_in_s: 934, config: null, offer: null };

export function checkInCurl(origin: string): string {
  return [
    `curl -sS -X POST ${origin}/api/device/v1/check-in \\`,
    `  -H 'Authorization: Bearer ${exampleToken}' \\`,
    `  -H 'Content-Type: application/json' \\`,
    `  -d '${JSON.stringify(exampleCheckIn)}'`,
  ].join('\n');
}

export function downloadCurl(origin: string): string {
  return [
    '# first attempt; the link drops part-way',
    `curl -sS -H 'Authorization: Bearer ${exampleToken}' -o image.bin \\`,
    `  ${origin}/api/device/v1/images/${exampleImageSha256.slice(0, 12)}…`,
    '# resume: curl asks for Range: bytes=<bytes on disk>-',
    `curl -sS -C - -H 'Authorization: Bearer ${exampleToken}' \\`,
    `  -H 'If-Range: "${exampleImageSha256.slice(0, 12)}…"' -o image.bin \\`,
    `  ${origin}/api/device/v1/images/${exampleImageSha256.slice(0, 12)}…`,
    'sha256sum image.bin   # must equal image.sha256 from the offer',
  ].join('\n');
}

export const exampleRangeAnswer = [
  'HTTP/1.1 206 Partial Content',
  'Accept-Ranges: bytes',
  `ETag: "${exampleImageSha256.slice(0, 12)}…"`,
  `Content-Range: bytes 200000-${exampleImageSize - 1}/${exampleImageSize}`,
  `Content-Length: ${exampleImageSize - 200000}`,
  'Content-Type: application/octet-stream',
].join('\n');

export const exampleProblem = {
  type: 'https://heliodor.example/problems/invalid-request',
  title: 'The request is not valid',
  status: 400,
  detail: 'Check the body: firmware.',
  instance: '/api/device/v1/check-in',
  errors: [{ path: 'firmware', message: "2.4.0 is a semantic version; 'v2.4.0' has a leading v" }],
};

export const statuses: { status: string; when: string }[] = [
  { status: '200', when: 'Checked in; or the whole image (also when If-Range does not match or several ranges are asked for).' },
  { status: '206', when: 'The one byte range asked for, with Content-Range.' },
  { status: '400', when: 'Not JSON, or a field with a wrong type or out of range; errors names each field.' },
  { status: '401', when: 'No token, or unknown, rotated, revoked or retired.' },
  { status: '404', when: 'Image id not 64 lowercase hex characters, or not offered to this logger by a live release.' },
  { status: '413', when: 'Check-in body over 16 KiB.' },
  { status: '416', when: 'Range starts at or past the end; Content-Range: bytes */size.' },
  { status: '429', when: 'More than 60 check-ins a minute from one logger; wait Retry-After seconds.' },
  { status: '503', when: 'Server busy or database unreachable; wait Retry-After seconds.' },
];
