// What a logger label's QR (or a typed code) may hold: the enrollment link `<origin>/enroll?t=<token>`
// or the bare token (`hlt_` + base64url, DEVICE_API.md). Pure: the scanner and the typed field share it.

const TOKEN = /^hlt_[A-Za-z0-9_-]{20,}$/;

export type CodeReading = { ok: true; token: string } | { ok: false; message: string };

export function readEnrollmentCode(raw: string): CodeReading {
  const text = raw.trim();
  if (text === '') return { ok: false, message: 'Type the token from the bench sheet row with the serial on the label.' };
  if (TOKEN.test(text)) return { ok: true, token: text };
  let url: URL | null = null;
  try {
    url = new URL(text);
  } catch {
    url = null;
  }
  if (url && /\/enroll\/?$/.test(url.pathname)) {
    const token = url.searchParams.get('t')?.trim() ?? '';
    if (TOKEN.test(token)) return { ok: true, token };
  }
  return {
    ok: false,
    message: 'This is not a Heliodor logger label: the code should be a link ending in "/enroll?t=hlt_…" or a token starting "hlt_".',
  };
}
