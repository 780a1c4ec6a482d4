// Decoding of (X++(Y..Y)) data in each ASDF form. Expected values are worked out by hand from the
// standard's definitions: McDonald & Wilks 1988, Appl. Spectrosc. 42:151, §5 (AFFN, PAC, SQZ @=0,
// A–I=+1…9, a–i=−1…9; DIF %=0, J–R=+1…9, j–r=−1…9; DUP S–Z=1…8, s=9, counting the first occurrence;
// in DIF form each line repeats the previous line's last Y as a check value).
import { convert } from 'jcampconverter';
import { describe, expect, test } from 'vitest';
import { parseSpectrumFile } from '../../../src/lib/spectra';
import { bytes, fixture, jcamp, refusal } from './helpers';

const values = (name: string, opts = {}) => Array.from(parseSpectrumFile(fixture(name), name, { minPoints: 3, ...opts }).spectra[0].values);
const inline = (data: string, lastx: number, npoints: number) => Array.from(parseSpectrumFile(bytes(jcamp(data, { lastx, npoints })), 'inline.jdx', { minPoints: 3 }).spectra[0].values);

describe('ASDF encodings (McDonald & Wilks 1988, §5)', () => {
	test('the standard\'s DIF example "A23J5j3" decodes to 123, 138, 125', () => {
		// A23 = SQZ +123; J5 = DIF +15 → 138; j3 = DIF −13 → 125; the closing line repeats 125 as its check.
		expect(inline('100A23J5j3\n104A25', 104, 3)).toEqual([123, 138, 125]);
	});

	test('AFFN: free-format numbers separated by blanks (decimals and signs allowed)', () => {
		expect(values('enc-affn.jdx')).toEqual([123, 138, 125, 120, 124.5, -3, 0, 7]);
	});

	test('PAC: the sign of each value is its delimiter', () => {
		expect(values('enc-pac.jdx')).toEqual([123, 138, 125, 120, 124, -3, 0, 7]);
	});

	test('SQZ: the first digit and sign in one letter; "c" = −3, "@" = 0, "G" = +7', () => {
		expect(values('enc-sqz.jdx')).toEqual([123, 138, 125, 120, 124, -3, 0, 7]);
	});

	test('DIF over several lines, each check value verified and dropped', () => {
		// 100: A23 J5 j3 → 123 138 125 | 104: check A25, k5 = −25 → 100, L7 = +37 → 137
		// 108: check A37, j5 = −15 → 122, % = 0 → 122 | 112: check A22, L1 = +31 → 153 | 114: check A53
		expect(values('enc-dif.jdx')).toEqual([123, 138, 125, 100, 137, 122, 122, 153]);
	});

	test('DUP after DIF repeats the difference: "A2J3U" = 12, 25, 38, 51; "%S3" = 13 zero steps', () => {
		expect(values('enc-difdup.jdx')).toEqual([12, 25, 38, 51, ...Array(13).fill(51)]);
	});

	test('DUP after an absolute value repeats the value: "A2U" = 12 12 12, "B3T" = 23 23, "A2S3" = 12 × 13', () => {
		expect(values('enc-dup-abs.jdx')).toEqual([12, 12, 12, 23, 23, ...Array(13).fill(12)]);
	});

	test('"1A2S3" style: X then SQZ 12 with S3 = 13 occurrences', () => {
		expect(inline('100A2S3', 124, 13)).toEqual(Array(13).fill(12));
	});

	test('negative SQZ and DIF letters: "a5" = −15, "j1" = −11, "r" = −9', () => {
		// a5 = −15; j1 → −26; r → −35; the closing line's check "c5" = −35.
		expect(inline('100a5j1r\n104c5', 104, 3)).toEqual([-15, -26, -35]);
	});

	test('the check value closes the last line too, or may be left out', () => {
		expect(inline('100A23J5j3', 104, 3)).toEqual([123, 138, 125]);
	});

	test('YFACTOR and XFACTOR are applied; descending 1/CM axis kept in file order', () => {
		const d = parseSpectrumFile(fixture('enc-descending-cm1.jdx'), 'd.jdx', { minPoints: 3 }).spectra[0];
		expect(d.unit).toBe('cm-1');
		expect(Array.from(d.axis)).toEqual([4000, 3998, 3996, 3994, 3992, 3990, 3988, 3986]);
		Array.from(d.values).forEach((v, i) => expect(v).toBeCloseTo((i + 1) * 0.1, 12));
		const x = parseSpectrumFile(fixture('enc-xfactor.jdx'), 'x.jdx', { minPoints: 3 }).spectra[0];
		expect(x.axis[0]).toBe(1100);
		expect(x.axis[7]).toBe(1114);
		expect(Array.from(x.values)).toEqual([0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4]);
	});

	test('encodings found are reported', () => {
		expect(parseSpectrumFile(fixture('enc-difdup.jdx'), 'e.jdx', { minPoints: 3 }).encodings?.sort()).toEqual(['DIF', 'DUP', 'SQZ']);
		expect(parseSpectrumFile(fixture('enc-pac.jdx'), 'e.jdx', { minPoints: 3 }).encodings).toEqual(['PAC']);
	});
});

describe('labels, metadata and line ends', () => {
	test('title, ##$ vendor labels, ##LONGDATE with offset, technique from DATA TYPE and axis range', () => {
		const r = parseSpectrumFile(fixture('enc-xfactor.jdx'), 'x.jdx', { minPoints: 3 });
		const s = r.spectra[0];
		expect(r.format).toBe('jcamp');
		expect(r.jcampVersion).toBe('4.24');
		expect(s.title).toBe('X written in tenths (XFACTOR=0.1)');
		expect(s.meta).toEqual({ INSTRUMENT: 'Fixture bench', 'SERIAL NUMBER': 'FX-001' });
		expect(s.acquiredAt).toBe('2024-11-05T14:03:27+01:00');
		expect(s.technique).toBe('NIR');
		expect(s.yUnit).toBe('ABSORBANCE');
		expect(s.id).toBeNull();
		expect(s.missing).toEqual([]);
	});

	test('##DATE (YY/MM/DD) with ##TIME; RAMAN SPECTRUM; MICROMETERS', () => {
		const s = parseSpectrumFile(fixture('enc-date-time.jdx'), 't.jdx', { minPoints: 3 }).spectra[0];
		expect(s.acquiredAt).toBe('1998-07-21T09:41:05');
		expect(s.technique).toBe('Raman');
		expect(s.unit).toBe('um');
	});

	test('INFRARED with most of the axis below 4000 cm⁻¹ is mid-IR', () => {
		expect(parseSpectrumFile(fixture('enc-descending-cm1.jdx'), 'd.jdx', { minPoints: 3 }).spectra[0].technique).toBe('mid-IR');
	});

	test('$$ comments and CRLF line ends', () => {
		expect(values('enc-comments-crlf.jdx')).toEqual([1, 2, 3, 4, 5, 6, 7, 8]);
	});

	test('"?" is a missing value: refused, or listed in `missing` when gaps are allowed', () => {
		refusal(() => values('gap-question-mark.jdx'), 'non-finite', 15);
		const s = parseSpectrumFile(fixture('gap-question-mark.jdx'), 'g.jdx', { minPoints: 3, allowGaps: true }).spectra[0];
		expect(s.missing).toEqual([2]);
		expect(Number.isNaN(s.values[2])).toBe(true);
		expect(Array.from(s.values).filter((_, i) => i !== 2)).toEqual([1, 2, 4, 5, 6, 7, 8]);
	});
});

describe('what jcampconverter itself does not check (why our checks exist)', () => {
	// Pinned so an upgrade that starts checking (or decoding differently) is noticed.
	const decode = (name: string) => convert(new TextDecoder().decode(fixture(name)), {}).flatten[0].spectra[0].data.y;
	test('a wrong DIF check value is accepted silently and changes the following values', () => {
		expect(decode('err-checkvalue.jdx')).toHaveLength(8);
		refusal(() => values('err-checkvalue.jdx'), 'checkvalue', 16);
	});
	test('an NPOINTS mismatch and a missing ##END= pass unnoticed', () => {
		expect(decode('err-npoints.jdx')).toHaveLength(7);
		expect(decode('err-truncated.jdx').length).toBeGreaterThan(0);
	});
	test('the X at the start of each line is ignored (the axis is computed from FIRSTX and the step)', () => {
		expect(decode('err-xcheck.jdx')).toHaveLength(8);
	});
});
