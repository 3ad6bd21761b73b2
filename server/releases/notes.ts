// Release notes: plain text or a small Markdown subset, rendered to HTML that can carry nothing but
// text. Pure. Every character of the input is HTML-escaped first; only then are these marks turned
// into tags: paragraphs (blank lines), line breaks, "# " / "## " / "### " headings, "- " or "* "
// list items, **bold**, *emphasis* or _emphasis_, and `code`. Links and raw HTML are not supported,
// so no attribute or URL from the notes ever reaches the page.

const escapes: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => escapes[c]);
}

/** Inline marks on already-escaped text; code spans are cut out first so their content stays literal. */
function inline(escaped: string): string {
  return escaped
    .split(/(`[^`\n]+`)/g)
    .map((part) => {
      if (/^`[^`\n]+`$/.test(part)) return `<code>${part.slice(1, -1)}</code>`;
      return part
        .replace(/\*\*(?=\S)([^*\n]*?\S)\*\*/g, '<strong>$1</strong>')
        .replace(/(^|[^*\w])\*(?=\S)([^*\n]*?\S)\*(?![*\w])/g, '$1<em>$2</em>')
        .replace(/(^|[^_\w])_(?=\S)([^_\n]*?\S)_(?![_\w])/g, '$1<em>$2</em>');
    })
    .join('');
}

export function renderNotes(notes: string): string {
  const blocks = notes.replace(/\r\n?/g, '\n').split(/\n[ \t]*\n/);
  const html: string[] = [];
  for (const block of blocks) {
    const lines = block.split('\n').filter((line) => line.trim() !== '');
    if (lines.length === 0) continue;
    let paragraph: string[] = [];
    let items: string[] = [];
    const flushParagraph = () => {
      if (paragraph.length) html.push(`<p>${paragraph.map((l) => inline(escapeHtml(l.trim()))).join('<br>')}</p>`);
      paragraph = [];
    };
    const flushList = () => {
      if (items.length) html.push(`<ul>${items.map((i) => `<li>${inline(escapeHtml(i))}</li>`).join('')}</ul>`);
      items = [];
    };
    for (const line of lines) {
      const heading = /^(#{1,3})\s+(.*)$/.exec(line.trim());
      const item = /^\s*[-*]\s+(.*)$/.exec(line);
      if (heading) {
        flushParagraph();
        flushList();
        const level = heading[1].length + 2; // # → h3: the release page already has its own h1/h2
        html.push(`<h${level}>${inline(escapeHtml(heading[2].trim()))}</h${level}>`);
      } else if (item) {
        flushParagraph();
        items.push(item[1].trim());
      } else {
        flushList();
        paragraph.push(line);
      }
    }
    flushParagraph();
    flushList();
  }
  return html.join('\n');
}
