// QR codes drawn in the client as SVG (the `qrcode` package's encoder; we only draw its modules), so the
// label sheet can be rendered from tokens the server handed out once and never stores in clear.
import { create } from 'qrcode';
import { LABEL_QR_ERROR_CORRECTION } from '../lib/label-sheet';

/** The QR code standard asks for a light margin of 4 modules. */
const QUIET = 4;

export function qrSvg(text: string): string {
  const { modules } = create(text, { errorCorrectionLevel: LABEL_QR_ERROR_CORRECTION });
  const n = modules.size;
  let path = '';
  for (let row = 0; row < n; row++) {
    for (let col = 0; col < n; col++) {
      if (modules.get(row, col)) path += `M${col + QUIET} ${row + QUIET}h1v1h-1z`;
    }
  }
  const size = n + 2 * QUIET;
  return (
    `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${size} ${size}" shape-rendering="crispEdges">` +
    `<rect width="${size}" height="${size}" fill="#fff"/><path d="${path}" fill="#000"/></svg>`
  );
}

export function qrDataUrl(text: string): string {
  return `data:image/svg+xml;charset=utf-8,${encodeURIComponent(qrSvg(text))}`;
}
