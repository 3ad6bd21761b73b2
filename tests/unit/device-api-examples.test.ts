// The examples on the console's Device API page must be valid under the schemas that validate real
// device requests (DEVICE_API.md), and the example error must read as the server writes it.
import { checkInRequestSchema, checkInResponseSchema } from '../../schemas/device';
import { semverProblem } from '../../schemas/semver';
import { tokenPattern } from '../../server/auth/tokens';
import {
  exampleAnswer,
  exampleCheckIn,
  exampleCheckInWithReport,
  exampleManifest,
  exampleProblem,
  exampleQuietAnswer,
  exampleToken,
} from '../../components/device-api-examples';

describe('Device API page examples', () => {
  test('when the example check-ins are parsed with the request schema, then they pass unchanged', () => {
    expect(checkInRequestSchema.parse(exampleCheckIn)).toEqual(exampleCheckIn);
    expect(checkInRequestSchema.parse(exampleCheckInWithReport)).toEqual(exampleCheckInWithReport);
  });

  test('when the example answers are parsed with the response schema, then they pass', () => {
    expect(checkInResponseSchema.safeParse(exampleAnswer).success).toBe(true);
    expect(checkInResponseSchema.safeParse(exampleQuietAnswer).success).toBe(true);
  });

  test('when the offer manifest is decoded, then it is the manifest text in RFC 8785 key order and names the offered image', () => {
    const text = Buffer.from(exampleAnswer.offer!.manifest, 'base64').toString('utf8');
    expect(text).toBe(exampleManifest);
    const m = JSON.parse(text);
    expect(Object.keys(m)).toEqual([...Object.keys(m)].sort()); // RFC 8785 §3.2.3: keys sorted (ASCII here)
    expect(m.image_sha256).toBe(exampleAnswer.offer!.image.sha256);
    expect(m.image_size).toBe(exampleAnswer.offer!.image.size);
  });

  test('when the example token is checked, then it has the logger token form (hlt_ + 43 base64url)', () => {
    expect(tokenPattern('hlt_').test(exampleToken)).toBe(true);
  });

  test('when the example error names firmware v2.4.0, then its message is what the semver check says', () => {
    expect(exampleProblem.errors[0].message).toBe(semverProblem('v2.4.0'));
  });
});
