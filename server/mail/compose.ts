// Heliodor's e-mails: every message has a plain-text part and an HTML part saying the same thing in the
// console's own words. A message that carries a link puts the link first in the text part, so a person
// reading plain text (or a phone's preview) sees where to go before anything else.
import type { Mail } from './mailer';

export type Composed = { subject: string; text: string; html: string };

const escapeHtml = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');

/** Paragraphs of text as HTML, with web addresses made into links. */
function paragraphsHtml(paragraphs: string[]): string {
  return paragraphs
    .map((p) => {
      const linked = escapeHtml(p).replace(/https?:\/\/[^\s<]+/g, (url) => `<a href="${url}">${url}</a>`);
      return `<p style="margin:0 0 14px">${linked.replace(/\n/g, '<br>')}</p>`;
    })
    .join('');
}

function page(subject: string, inner: string): string {
  return (
    `<!doctype html><html><head><meta charset="utf-8"><title>${escapeHtml(subject)}</title></head>` +
    `<body style="margin:0;padding:24px;background:#F7F5EE;font-family:'IBM Plex Sans',Arial,sans-serif;color:#1E2A2F;font-size:15px;line-height:22px">` +
    `<div style="max-width:520px;margin:0 auto;background:#FFFFFF;border:1px solid #D9D4C7;border-radius:12px;padding:24px">` +
    `<p style="margin:0 0 16px;font-weight:700;letter-spacing:.5px">Heliodor</p>${inner}</div></body></html>`
  );
}

/** A message built around one link: the link first in the text, a button in the HTML. */
export function linkMail(input: { subject: string; link: string; action: string; paragraphs: string[]; footnote?: string }): Composed {
  const text = [input.link, '', ...input.paragraphs.flatMap((p) => [p, '']), ...(input.footnote ? [input.footnote] : [])].join('\n').trim() + '\n';
  const button =
    `<p style="margin:0 0 18px"><a href="${escapeHtml(input.link)}" style="display:inline-block;background:#C8A82C;color:#1E2A2F;` +
    `font-weight:600;text-decoration:none;padding:12px 18px;border-radius:8px">${escapeHtml(input.action)}</a></p>`;
  const plainLink = `<p style="margin:0 0 14px;font-size:13px;color:#4A5A61">Or open this address: <a href="${escapeHtml(input.link)}">${escapeHtml(input.link)}</a></p>`;
  const foot = input.footnote ? `<p style="margin:16px 0 0;font-size:13px;color:#4A5A61">${escapeHtml(input.footnote)}</p>` : '';
  return { subject: input.subject, text, html: page(input.subject, button + paragraphsHtml(input.paragraphs) + plainLink + foot) };
}

/** The HTML part of a message that was written as plain text only (e.g. a release that tripped). */
export function htmlFromText(subject: string, text: string): string {
  return page(subject, paragraphsHtml(text.split(/\n{2,}/)));
}

/** Fills in the HTML part when a message has only text, so every message has both. */
export function withHtml(mail: Mail): Mail & { html: string } {
  return { ...mail, html: mail.html ?? htmlFromText(mail.subject, mail.text) };
}
