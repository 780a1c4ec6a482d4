// jcampconverter 12.5.3 (a development dependency only) as an outside oracle for our one JCAMP-DX decoder: on every
// fixture and demo file we accept, both readings give the same ordinates (to 1e-9 relative: jcampconverter builds
// decimals digit by digit, we use Number()) and the same private-label metadata. Our decoder is the one shipped
// because it also checks what jcampconverter does not (encodings.test.ts pins those gaps). On corrupt data the two
// may differ (jcampconverter stays in difference mode after a DIF value until a SQZ one, so it drops the first value
// of every later line where the standard reads an absolute value); files like that are not instrument output.
import { convert } from 'jcampconverter';
import { readdirSync, readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { demoScenario } from '../../../src/lib/demo';
import { driftLots } from '../../../src/lib/demo/monitoring';
import { parseSpectrumFile } from '../../../src/lib/spectra';
import { bytes } from './helpers';

const root = new URL('../../../fixtures/', import.meta.url);
const jdxUnder = (dir: string): { name: string; bytes: Uint8Array }[] =>
	readdirSync(new URL(dir, root), { recursive: true, encoding: 'utf8' })
		.filter((n) => n.endsWith('.jdx'))
		.map((n) => ({ name: `${dir}${n}`, bytes: new Uint8Array(readFileSync(new URL(`${dir}${n}`, root))) }));

const reads = (f: { name: string; bytes: Uint8Array }) => {
	try {
		parseSpectrumFile(f.bytes, f.name, { allowGaps: true, minPoints: 3 });
		return true;
	} catch {
		return false;
	}
};
const all = [
	...jdxUnder('spectra/').filter((f) => !f.name.includes('/err-')),
	...jdxUnder('demo/lots/'),
	...demoScenario().lots.flatMap((l) => l.files.map((f) => ({ name: `scenario/${f.name}`, bytes: f.bytes }))),
	...driftLots().flatMap((l) => l.files.map((f) => ({ name: `monitoring/${f.name}`, bytes: f.bytes })))
];
// The demo's deliberately truncated file is refused by us (no ##END=); jcampconverter would read it.
const files = all.filter(reads);

/** jcampconverter's reading: the ordinates (a "?" it skips) and the private labels as our parser reports them. */
function oracle(b: Uint8Array) {
	const entry = convert(new TextDecoder().decode(b), { keepRecordsRegExp: /.*/, dynamicTyping: false }).flatten[0];
	const meta: Record<string, string> = {};
	for (const [k, v] of Object.entries(entry.meta as Record<string, unknown>)) {
		const text = Array.isArray(v) ? v.map(String).join('; ') : v == null ? undefined : String(v);
		if (text !== undefined) meta[k.trim()] = text.replace(/\$\$[\s\S]*$/, '').trim();
	}
	return { y: entry.spectra[0].data.y as number[], meta };
}

function agree(name: string, b: Uint8Array) {
	const ours = parseSpectrumFile(b, name, { allowGaps: true, minPoints: 3 }).spectra[0];
	const theirs = oracle(b);
	const finite = Array.from(ours.values).filter((v) => !Number.isNaN(v));
	expect(finite.length, `${name}: number of values`).toBe(theirs.y.length);
	finite.forEach((v, i) => {
		const t = theirs.y[i];
		expect(Math.abs(v - t), `${name}: value ${i + 1} (${v} vs ${t})`).toBeLessThanOrEqual(1e-9 * Math.max(Math.abs(v), Math.abs(t)) + 1e-12);
	});
	expect(ours.meta, `${name}: metadata`).toEqual(theirs.meta);
}

describe('our JCAMP-DX decoder agrees with jcampconverter', () => {
	test('the fixture and demo files cover every encoding and some metadata', () => {
		expect(all.filter((f) => !reads(f)).map((f) => f.name)).toEqual(['demo/lots/lac-corrupt/lac-corrupt-C02.jdx', 'scenario/lac-corrupt-C02.jdx']);
		expect(files.length).toBeGreaterThan(60);
		const encodings = new Set(files.flatMap((f) => parseSpectrumFile(f.bytes, f.name, { allowGaps: true, minPoints: 3 }).encodings ?? []));
		expect([...encodings].sort()).toEqual(['AFFN', 'DIF', 'DUP', 'PAC', 'SQZ']);
		expect(files.some((f) => Object.keys(parseSpectrumFile(f.bytes, f.name, { allowGaps: true, minPoints: 3 }).spectra[0].meta).length > 0)).toBe(true);
	});

	test.each(files.map((f) => [f.name, f.bytes] as const))('%s', (name, b) => agree(name, b));

	test('private labels: repeated, commented, multi-line, and the {list} and (1..n) forms', () => {
		const text = [
			'##TITLE=meta forms',
			'##JCAMP-DX=5.01',
			'##DATA TYPE=NEAR INFRARED SPECTRUM',
			'##$OPERATOR=A. Tester $$ who ran it',
			'##$NOTE=first',
			'##$NOTE=second',
			'##$BANDS={1100 1200; 1300}',
			'##$WEIGHTS=(1..3)',
			'0.5 0.25',
			'0.125',
			'##$REMARK=line one',
			'line two',
			'##XUNITS=NANOMETERS',
			'##YUNITS=ABSORBANCE',
			'##XFACTOR=1',
			'##YFACTOR=0.001',
			'##FIRSTX=1100',
			'##LASTX=1104',
			'##NPOINTS=3',
			'##XYDATA=(X++(Y..Y))',
			'1100 100 200 300',
			'##END='
		].join('\n');
		agree('meta.jdx', bytes(text));
		expect(parseSpectrumFile(bytes(text), 'meta.jdx', { minPoints: 3 }).spectra[0].meta).toMatchObject({ OPERATOR: 'A. Tester', NOTE: 'first; second', BANDS0: '1100', BANDS2: '1300', WEIGHTS2: '0.25', REMARK: 'line one\nline two' });
	});
});
