// Every character the pages print must exist in a font the browser has: the shipped Source Sans 3 (all its subsets,
// loaded by the layout's @fontsource CSS) or DejaVu Sans, the fallback of Debian's Chromium. Characters outside both
// (full-width ＋/－, "⧗", emoji such as "📎") render as empty boxes there, so the pages use SVG icons (@lucide/svelte).
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import * as fontkit from 'fontkit';
import { describe, expect, it } from 'vitest';

const require = createRequire(import.meta.url);
const fontDir = join(dirname(require.resolve('@fontsource/source-sans-3/LICENSE')), 'files');
const DEJAVU = '/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf';

function files(dir: string, out: string[] = []): string[] {
	for (const name of readdirSync(dir)) {
		const p = join(dir, name);
		if (statSync(p).isDirectory()) files(p, out);
		else if (/\.(svelte|ts)$/.test(name) && !p.includes(`${join('lib', 'server')}`) && !p.includes(join('lib', 'analysis'))) out.push(p);
	}
	return out;
}

/** Non-ASCII characters of the UI sources, outside comments, with the first file that uses each. */
function uiCharacters(): Map<number, string> {
	const used = new Map<number, string>();
	for (const f of files('src')) {
		const text = readFileSync(f, 'utf8')
			.replace(/<!--[\s\S]*?-->/g, '')
			.replace(/\/\*[\s\S]*?\*\//g, '')
			.replace(/(^|[^:'"`])\/\/.*$/gm, '$1');
		for (const ch of text) {
			const cp = ch.codePointAt(0)!;
			// Combining marks and variation selectors attach to a base letter; the base is checked.
			if (cp > 0x7f && !(cp >= 0x300 && cp <= 0x36f) && !(cp >= 0xfe00 && cp <= 0xfe0f) && !used.has(cp)) used.set(cp, f);
		}
	}
	return used;
}

function coverage(): Set<number> {
	const set = new Set<number>();
	for (const name of readdirSync(fontDir).filter((n) => /-400-normal\.woff$/.test(n))) for (const cp of fontkit.create(readFileSync(join(fontDir, name))).characterSet) set.add(cp);
	return set;
}

describe('characters on the pages', () => {
	const used = uiCharacters();

	it('finds the UI sources (the scan itself works)', () => {
		expect(used.has(0x2014)).toBe(true); // "—" appears on many pages
	});

	it('uses none of the glyphs the shipped and fallback fonts lack (full-width forms, emoji, U+29D7)', () => {
		const banned = [...used.entries()].filter(([cp]) => (cp >= 0xff00 && cp <= 0xffef) || cp >= 0x1f000 || cp === 0x29d7);
		expect(banned.map(([cp, f]) => `${String.fromCodePoint(cp)} U+${cp.toString(16)} in ${f}`)).toEqual([]);
	});

	it.skipIf(!existsSync(DEJAVU))('prints only characters in Source Sans 3 or DejaVu Sans', () => {
		const have = coverage();
		for (const cp of fontkit.create(readFileSync(DEJAVU)).characterSet) have.add(cp);
		// The check can fail: the full-width plus is in neither font.
		expect(have.has(0xff0b)).toBe(false);
		const missing = [...used.entries()].filter(([cp]) => !have.has(cp));
		expect(missing.map(([cp, f]) => `${String.fromCodePoint(cp)} U+${cp.toString(16)} in ${f}`)).toEqual([]);
	});
});
