// Release notes as text blocks. The server sends notesHtml already escaped, but the console never
// injects HTML: the markup is read into paragraphs, headings and list items and drawn as <Text>.
import React from 'react';
import { Text, View } from 'react-native';
import { colors, fonts, space, type } from './theme';

export type NoteBlock = { kind: 'heading' | 'paragraph' | 'item' | 'code'; text: string };

const entities: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'", nbsp: ' ' };

function decode(s: string): string {
  return s.replace(/&(#x[0-9a-f]+|#\d+|[a-z]+);/gi, (m, e: string) => {
    if (e[0] === '#') {
      const code = e[1] === 'x' || e[1] === 'X' ? parseInt(e.slice(2), 16) : parseInt(e.slice(1), 10);
      return Number.isFinite(code) && code > 0 && code <= 0x10ffff ? String.fromCodePoint(code) : m;
    }
    return entities[e.toLowerCase()] ?? m;
  });
}

/** Reads simple HTML (p, h1–h6, li, pre, br) into blocks of plain text; every other tag is dropped. Pure. */
export function notesBlocks(html: string): NoteBlock[] {
  const blocks: NoteBlock[] = [];
  const re = /<(h[1-6]|p|li|pre)\b[^>]*>([\s\S]*?)<\/\1>/gi;
  let last = 0;
  let m: RegExpExecArray | null;
  const pushLoose = (chunk: string) => {
    for (const part of chunk.split(/<br\s*\/?>|\n{2,}/i)) {
      const text = decode(part.replace(/<[^>]*>/g, '')).trim();
      if (text) blocks.push({ kind: 'paragraph', text });
    }
  };
  while ((m = re.exec(html))) {
    pushLoose(html.slice(last, m.index));
    last = re.lastIndex;
    const tag = m[1].toLowerCase();
    const inner = tag === 'pre' ? m[2] : m[2].replace(/<br\s*\/?>/gi, '\n');
    const text = decode(inner.replace(/<[^>]*>/g, ''));
    const kind: NoteBlock['kind'] = tag === 'li' ? 'item' : tag === 'pre' ? 'code' : tag === 'p' ? 'paragraph' : 'heading';
    if (text.trim()) blocks.push({ kind, text: kind === 'code' ? text.replace(/\n$/, '') : text.trim() });
  }
  pushLoose(html.slice(last));
  return blocks;
}

export function ReleaseNotes({ html, text }: { html: string | null; text: string | null }) {
  const blocks = html ? notesBlocks(html) : (text ?? '').split(/\n{2,}/).filter((p) => p.trim()).map((p) => ({ kind: 'paragraph' as const, text: p.trim() }));
  if (!blocks.length) return <Text style={type.small}>No release notes.</Text>;
  return (
    <View style={{ gap: space.sm }} testID="release-notes">
      {blocks.map((b, i) =>
        b.kind === 'heading' ? (
          <Text key={i} style={type.heading}>
            {b.text}
          </Text>
        ) : b.kind === 'item' ? (
          <View key={i} style={{ flexDirection: 'row', gap: space.sm, paddingLeft: space.sm }}>
            <Text style={type.body}>•</Text>
            <Text style={[type.body, { flex: 1 }]}>{b.text}</Text>
          </View>
        ) : b.kind === 'code' ? (
          <Text key={i} style={[type.mono, { backgroundColor: colors.paperDeep, padding: space.sm, fontFamily: fonts.mono }]}>
            {b.text}
          </Text>
        ) : (
          <Text key={i} style={type.body}>
            {b.text}
          </Text>
        ),
      )}
    </View>
  );
}
