// An independent reference for one-time codes, written from RFC 4226 §5.3 (HOTP: HMAC, dynamic
// truncation, modulo) and RFC 6238 §4 (TOTP: the counter is the number of 30-second steps since 0), with
// node:crypto's HMAC — not otplib, the library the server uses. Tests check it against the RFCs' own
// vectors (RFC 4226 Appendix D, RFC 6238 Appendix B) before trusting it to type codes into Heliodor.
import crypto from 'node:crypto';

export function hotp(key: Buffer, counter: bigint, digits = 6, algorithm: 'sha1' | 'sha256' | 'sha512' = 'sha1'): string {
  const message = Buffer.alloc(8);
  message.writeBigUInt64BE(counter);
  const mac = crypto.createHmac(algorithm, key).update(message).digest();
  const offset = mac[mac.length - 1] & 0x0f;
  const binary = ((mac[offset] & 0x7f) << 24) | (mac[offset + 1] << 16) | (mac[offset + 2] << 8) | mac[offset + 3];
  return String(binary % 10 ** digits).padStart(digits, '0');
}

export function totp(key: Buffer, unixSeconds: number, digits = 6, algorithm: 'sha1' | 'sha256' | 'sha512' = 'sha1'): string {
  return hotp(key, BigInt(Math.floor(unixSeconds / 30)), digits, algorithm);
}

/** RFC 4648 Base32, as authenticator apps are given secrets. */
export function base32Decode(text: string): Buffer {
  const alphabet = 'ABCDEFGHIJKLMNOPQRSTUVWXYZ234567';
  const clean = text.toUpperCase().replace(/=+$/, '').replace(/\s+/g, '');
  let bits = 0;
  let value = 0;
  const out: number[] = [];
  for (const ch of clean) {
    const i = alphabet.indexOf(ch);
    if (i < 0) throw new Error(`not Base32: ${ch}`);
    value = (value << 5) | i;
    bits += 5;
    if (bits >= 8) {
      out.push((value >>> (bits - 8)) & 0xff);
      bits -= 8;
    }
  }
  return Buffer.from(out);
}

/** The code an authenticator app shows now for a Base32 secret. */
export const codeFor = (secret: string, at: Date = new Date()) => totp(base32Decode(secret), Math.floor(at.getTime() / 1000));
