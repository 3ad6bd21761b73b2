import { createHash } from 'node:crypto';
import fc from 'fast-check';
import { BUCKETS, bucketOf, inShare, shareThreshold, wholeShareIncluding } from '../../server/rollout/cohort';

// Bucket formula: DEVICE_API.md "Who gets an offer", rule 3 — first 4 bytes of
// SHA-256(`<logger id>:<release id>`) as an unsigned big-endian integer, mod 10 000.
// The literals below were computed once outside Heliodor's code, with node:crypto
// (createHash('sha256').update(`${logger}:${release}`).digest('hex'), first 8 hex digits, parseInt(…, 16) % 10000)
// and cross-checked with Python's hashlib (int.from_bytes(digest[:4], 'big') % 10000).
const vectors = [
  { logger: '3f2b8c1e-5d4a-4e6b-9c7d-1a2b3c4d5e6f', release: '8a1c2d3e-4f50-4a6b-8c7d-9e0f1a2b3c4d', first4: '706eea73', bucket: 7171 },
  { logger: '00000000-0000-4000-8000-000000000001', release: '00000000-0000-4000-8000-0000000000aa', first4: '9ae25bfb', bucket: 5947 },
  { logger: 'b6d1f0e2-7c3a-4b59-a8e4-2f6c9d0b1a37', release: 'c4e2a9f1-0b7d-4e3c-9a58-6d1f2e3b4c5a', first4: '61e4dead', bucket: 9165 },
  // Loggers found by searching for the buckets on each side of the 5 % and 25 % boundaries of one release.
  { logger: '5e1a0000-0000-4000-8000-000000003114', release: 'c4e2a9f1-0b7d-4e3c-9a58-6d1f2e3b4c5a', first4: null, bucket: 499 },
  { logger: '5e1a0000-0000-4000-8000-000000001905', release: 'c4e2a9f1-0b7d-4e3c-9a58-6d1f2e3b4c5a', first4: null, bucket: 500 },
  { logger: '5e1a0000-0000-4000-8000-000000002473', release: 'c4e2a9f1-0b7d-4e3c-9a58-6d1f2e3b4c5a', first4: null, bucket: 2499 },
  { logger: '5e1a0000-0000-4000-8000-000000001a77', release: 'c4e2a9f1-0b7d-4e3c-9a58-6d1f2e3b4c5a', first4: null, bucket: 2500 },
  { logger: '5e1a0000-0000-4000-8000-00000000092a', release: 'c4e2a9f1-0b7d-4e3c-9a58-6d1f2e3b4c5a', first4: null, bucket: 0 },
];

/** The formula written out again with node:crypto as the reference library, independently of cohort.ts. */
function referenceBucket(logger: string, release: string): number {
  const hex = createHash('sha256').update(`${logger}:${release}`).digest('hex');
  return parseInt(hex.slice(0, 8), 16) % 10000;
}

describe('rollout share buckets', () => {
  test.each(vectors)('when logger $logger checks release $release, then its bucket is $bucket', ({ logger, release, first4, bucket }) => {
    expect(bucketOf(logger, release)).toBe(bucket);
    expect(referenceBucket(logger, release)).toBe(bucket);
    if (first4) expect(createHash('sha256').update(`${logger}:${release}`).digest('hex').slice(0, 8)).toBe(first4);
  });

  test('when the ids are swapped, then the bucket changes (the order logger:release is part of the formula)', () => {
    const { logger, release, bucket } = vectors[0];
    expect(bucketOf(release, logger)).toBe(referenceBucket(release, logger));
    expect(bucketOf(release, logger)).not.toBe(bucket);
  });

  test('when any two UUIDs are given, then the bucket equals the node:crypto reference and lies in 0…9 999', () => {
    fc.assert(
      fc.property(fc.uuid(), fc.uuid(), (logger, release) => {
        const b = bucketOf(logger, release);
        return b === referenceBucket(logger, release) && Number.isInteger(b) && b >= 0 && b < BUCKETS;
      }),
    );
  });

  test.each([
    { bucket: 499, share: 5, inside: true },
    { bucket: 500, share: 5, inside: false },
    { bucket: 2499, share: 25, inside: true },
    { bucket: 2500, share: 25, inside: false },
    { bucket: 249, share: 2.5, inside: true },
    { bucket: 250, share: 2.5, inside: false },
    // 0.1 × 100 is 10.000000000000002 in binary floating point; 0.1 % is exactly the buckets 0–9.
    { bucket: 9, share: 0.1, inside: true },
    { bucket: 10, share: 0.1, inside: false },
    // 0.29 × 100 is 28.999999999999996; 0.29 % is exactly the buckets 0–28.
    { bucket: 28, share: 0.29, inside: true },
    { bucket: 29, share: 0.29, inside: false },
  ])('when the bucket is $bucket and the share $share %, then inside is $inside (bucket < share × 100)', ({ bucket, share, inside }) => {
    expect(inShare(bucket, share)).toBe(inside);
  });

  test('when the share is 0 %, then no bucket is inside; when it is 100 %, then every bucket is', () => {
    for (let bucket = 0; bucket < BUCKETS; bucket++) {
      expect(inShare(bucket, 0)).toBe(false);
      expect(inShare(bucket, 100)).toBe(true);
    }
  });

  test('when the share is widened, then no logger that was inside drops out (DEVICE_API.md rule 3)', () => {
    fc.assert(
      fc.property(fc.uuid(), fc.uuid(), fc.double({ min: 0, max: 100, noNaN: true }), fc.double({ min: 0, max: 100, noNaN: true }), (logger, release, a, b) => {
        const [narrow, wide] = a <= b ? [a, b] : [b, a];
        const bucket = bucketOf(logger, release);
        return !inShare(bucket, narrow) || inShare(bucket, wide);
      }),
      { numRuns: 2000 },
    );
  });

  test('when the share is a whole percent, then exactly share × 100 of the 10 000 buckets are inside', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 100 }), (share) => {
        let inside = 0;
        for (let bucket = 0; bucket < BUCKETS; bucket++) if (inShare(bucket, share)) inside++;
        return inside === share * 100;
      }),
      { numRuns: 30 },
    );
  });

  test('when the share is not a number, then nobody is inside', () => {
    expect(inShare(0, Number.NaN)).toBe(false);
    expect(shareThreshold(Number.NaN)).toBe(0);
  });

  test.each([
    { share: 0.1, threshold: 10 },
    { share: 0.29, threshold: 29 },
    { share: 2.5, threshold: 250 },
    { share: 5, threshold: 500 },
    { share: 100, threshold: 10000 },
  ])('when the share is $share %, then the first bucket outside it is $threshold (share × 100 in decimal)', ({ share, threshold }) => {
    expect(shareThreshold(share)).toBe(threshold);
  });
});

describe('the share that includes a bucket, for installers', () => {
  // The rule it must agree with: a bucket is inside when bucket < share × 100 (DEVICE_API.md rule 3).
  test.each([
    { bucket: 0, share: 1 },
    { bucket: 99, share: 1 },
    { bucket: 100, share: 2 },
    { bucket: 6731, share: 68 },
    { bucket: 9999, share: 100 },
  ])('when the bucket is $bucket, then it joins at a share of $share %', ({ bucket, share }) => {
    expect(wholeShareIncluding(bucket)).toBe(share);
  });

  test('when any bucket is checked, then the whole share named includes it and the one below does not', () => {
    const misses: number[] = [];
    for (let bucket = 0; bucket < BUCKETS; bucket++) {
      const share = wholeShareIncluding(bucket);
      if (!inShare(bucket, share) || inShare(bucket, share - 1)) misses.push(bucket);
    }
    expect(misses).toEqual([]);
  });
});
