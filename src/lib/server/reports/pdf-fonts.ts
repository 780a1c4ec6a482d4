// The reports' font: Source Sans 3 from @fontsource (WOFF files, read by pdfkit as plain sfnt bytes), embedded in every
// PDF, never a system font. `printable` keeps every character the embedded font has (its own character map, read with
// fontkit: curly quotes, dashes, ·, €, ™ …) and spells out the few it lacks, so nothing prints as "?" or an empty box.
import * as fontkit from 'fontkit';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { inflateSync } from 'node:zlib';

const require = createRequire(import.meta.url);
// The package exports no font paths, but it does export its LICENSE, which sits beside files/.
const fontDir = () => join(dirname(require.resolve('@fontsource/source-sans-3/LICENSE')), 'files');
const FILES = { regular: 'source-sans-3-latin-400-normal.woff', semibold: 'source-sans-3-latin-600-normal.woff' };

/**
 * WOFF 1.0 → plain sfnt (TrueType/OpenType) bytes: the same tables, inflated once. fontkit re-inflates a WOFF table on
 * every glyph lookup, which made one certificate take over a second; from the sfnt bytes it takes a few milliseconds.
 */
export function woffToSfnt(woff: Buffer): Buffer {
	if (woff.toString('latin1', 0, 4) !== 'wOFF') throw new Error('not a WOFF 1.0 file');
	const numTables = woff.readUInt16BE(12);
	const tables = Array.from({ length: numTables }, (_, i) => {
		const at = 44 + i * 20;
		const offset = woff.readUInt32BE(at + 4);
		const compLength = woff.readUInt32BE(at + 8);
		const origLength = woff.readUInt32BE(at + 12);
		const raw = woff.subarray(offset, offset + compLength);
		const data = compLength < origLength ? inflateSync(raw) : Buffer.from(raw);
		if (data.length !== origLength) throw new Error('WOFF table length mismatch');
		return { tag: woff.subarray(at, at + 4), checksum: woff.readUInt32BE(at + 16), data };
	});
	let power = 1;
	while (power * 2 <= numTables) power *= 2;
	const header = Buffer.alloc(12 + 16 * numTables);
	woff.copy(header, 0, 4, 8); // flavor
	header.writeUInt16BE(numTables, 4);
	header.writeUInt16BE(power * 16, 6);
	header.writeUInt16BE(Math.log2(power), 8);
	header.writeUInt16BE(numTables * 16 - power * 16, 10);
	const bodies: Buffer[] = [];
	let offset = header.length;
	tables.forEach((t, i) => {
		const at = 12 + i * 16;
		t.tag.copy(header, at);
		header.writeUInt32BE(t.checksum, at + 4);
		header.writeUInt32BE(offset, at + 8);
		header.writeUInt32BE(t.data.length, at + 12);
		const padded = Buffer.alloc((t.data.length + 3) & ~3);
		t.data.copy(padded);
		bodies.push(padded);
		offset += padded.length;
	});
	return Buffer.concat([header, ...bodies]);
}

let cache: { regular: Buffer; semibold: Buffer; chars: Set<number> } | null = null;
function load() {
	if (!cache) {
		const dir = fontDir();
		const regular = woffToSfnt(readFileSync(join(dir, FILES.regular)));
		const semibold = woffToSfnt(readFileSync(join(dir, FILES.semibold)));
		// A character prints only when both weights have it.
		const bold = new Set(fontkit.create(semibold).characterSet);
		const chars = new Set(fontkit.create(regular).characterSet.filter((c) => bold.has(c)));
		cache = { regular, semibold, chars };
	}
	return cache;
}

/** The embedded fonts as sfnt bytes, for doc.registerFont('body' | 'bold', …). */
export function reportFonts(): { regular: Buffer; semibold: Buffer } {
	const { regular, semibold } = load();
	return { regular, semibold };
}

/** Characters the embedded font lacks, in words or plain signs. */
const SPELLED: Record<string, string> = {
	α: 'alpha',
	β: 'beta',
	γ: 'gamma',
	χ: 'chi',
	σ: 'sigma',
	λ: 'lambda',
	µ: 'u',
	μ: 'u',
	'≤': '<=',
	'≥': '>=',
	'≈': '~',
	'√': 'sqrt',
	'⌈': 'ceil(',
	'⌉': ')',
	'→': '->',
	'←': '<-',
	'×': 'x',
	'✓': 'yes',
	'✔': 'yes',
	'✖': 'no',
	'✕': 'x',
	'⚠': '!',
	'…': '...'
};

/** True when the embedded font (both weights) has a glyph for the code point. */
export function fontHas(codePoint: number): boolean {
	return load().chars.has(codePoint);
}

/**
 * Text as the embedded font can print it: characters it has stay as they are; sub- and superscript digits become plain
 * digits; a few known signs are spelled out; anything else becomes "?" (never an empty box).
 */
export function printable(text: string): string {
	const { chars } = load();
	let out = '';
	for (const ch of text) {
		const cp = ch.codePointAt(0)!;
		if (chars.has(cp)) out += ch;
		else if (cp >= 0x2080 && cp <= 0x2089) out += String(cp - 0x2080);
		else if ('⁰¹²³⁴⁵⁶⁷⁸⁹'.includes(ch)) out += String('⁰¹²³⁴⁵⁶⁷⁸⁹'.indexOf(ch));
		else if (ch in SPELLED && [...SPELLED[ch]].every((c) => chars.has(c.codePointAt(0)!))) out += SPELLED[ch];
		else out += '?';
	}
	return out;
}
