// CSV/TSV layouts, delimiter and decimal-comma handling, and the axis-unit rule (documented in csv.ts).
import { describe, expect, test } from 'vitest';
import { detectFormat, parseSpectrumFile, unitHint } from '../../../src/lib/spectra';
import { bytes, fixture, refusal } from './helpers';

const parse = (name: string, opts = {}) => parseSpectrumFile(fixture(name), name, { minPoints: 3, ...opts });
const expected = [0.5, 0.501, 0.502, 0.503, 0.504, 0.505, 0.506, 0.507];

describe('two-column x,y files', () => {
	test('with a header naming the unit', () => {
		const r = parse('xy-header.csv');
		expect(r.format).toBe('csv-xy');
		expect(r.spectra[0].unit).toBe('nm');
		expect(r.spectra[0].yUnit).toBe('absorbance');
		expect(Array.from(r.spectra[0].axis)).toEqual([1100, 1102, 1104, 1106, 1108, 1110, 1112, 1114]);
		expect(Array.from(r.spectra[0].values)).toEqual(expected);
		expect(r.spectra[0].line).toBe(2);
	});

	test('without a header: 700..3000 → nm, 3000..15000 → cm-1', () => {
		expect(parse('xy-no-header.csv').spectra[0].unit).toBe('nm');
		expect(parse('xy-no-header.csv').spectra[0].yUnit).toBeNull();
		expect(parse('xy-range-cm1.csv').spectra[0].unit).toBe('cm-1');
	});

	test('semicolons with a decimal comma (and a non-ASCII header)', () => {
		const r = parse('xy-semicolon-decimal-comma.csv');
		expect(Array.from(r.spectra[0].values)).toEqual(expected);
		expect(r.spectra[0].unit).toBe('nm');
	});

	test('tab-separated, descending wavenumbers named in the header', () => {
		const s = parse('xy-wavenumber.tsv').spectra[0];
		expect(s.unit).toBe('cm-1');
		expect(s.axis[0]).toBe(1800);
		expect(s.axis[7]).toBe(1786);
	});

	test('an ambiguous range needs a header hint or the unit option', () => {
		refusal(() => parse('err-unit.csv'), 'unknown-unit');
		expect(parse('err-unit.csv', { unit: 'cm-1' }).spectra[0].unit).toBe('cm-1');
	});

	test('a header hint wins over the option', () => {
		expect(parse('xy-wavenumber.tsv', { unit: 'nm' }).spectra[0].unit).toBe('cm-1');
	});

	test('header hints', () => {
		expect(unitHint('wavelength_nm')).toBe('nm');
		expect(unitHint('Wavelength (nm)')).toBe('nm');
		expect(unitHint('wavenumber_cm-1')).toBe('cm-1');
		expect(unitHint('Raman shift')).toBe('cm-1');
		expect(unitHint('x [1/cm]')).toBe('cm-1');
		expect(unitHint('lambda_um')).toBe('um');
		expect(unitHint('wavelength')).toBeNull();
		expect(unitHint('intensity')).toBeNull();
	});

	test('a Latin-1 export (older instrument software) is read too', () => {
		const latin1 = Uint8Array.from([...'Wellenl', 0xe4, ...'nge_nm;A\n1100;0,1\n1102;0,2\n1104;0,3\n'].map((c) => (typeof c === 'number' ? c : c.charCodeAt(0))));
		const r = parseSpectrumFile(latin1, 'latin1.csv', { minPoints: 3 });
		expect(Array.from(r.spectra[0].values)).toEqual([0.1, 0.2, 0.3]);
		expect(r.spectra[0].unit).toBe('nm');
	});

	test('a UTF-8 byte-order mark and CRLF line ends', () => {
		const text = '\uFEFFwavelength_nm,absorbance\r\n1100,0.1\r\n1102,0.2\r\n1104,0.3\r\n';
		expect(Array.from(parseSpectrumFile(bytes(text), 'bom.csv', { minPoints: 3 }).spectra[0].values)).toEqual([0.1, 0.2, 0.3]);
	});
});

describe('matrix files, one spectrum per row', () => {
	test('numeric headers are the axis; the other columns metadata; id from the first of them', () => {
		const r = parse('matrix.csv');
		expect(r.format).toBe('csv-matrix');
		expect(r.metaColumns).toEqual(['id', 'class', 'supplier', 'lot']);
		expect(r.spectra.map((s) => s.id)).toEqual(['S-01', 'S-02', 'S-03']);
		expect(r.spectra[2].meta).toEqual({ id: 'S-03', class: 'suspect', supplier: 'Palmera, Trading', lot: 'L3' });
		expect(Array.from(r.spectra[1].values)).toEqual([0.61, 0.62, 0.63, 0.64, 0.65]);
		expect(Array.from(r.spectra[0].axis)).toEqual([1100, 1102, 1104, 1106, 1108]);
		expect(r.spectra.map((s) => s.line)).toEqual([2, 3, 4]);
	});

	test('semicolon matrix with decimal commas', () => {
		const r = parse('matrix-semicolon.csv');
		expect(Array.from(r.spectra[1].values)).toEqual([0.61, 0.62, 0.63, 0.64, 0.65]);
	});

	test('an empty spectral cell is a gap: refused unless allowed', () => {
		refusal(() => parse('matrix-gap.csv'), 'non-finite', 2);
		const s = parse('matrix-gap.csv', { allowGaps: true }).spectra[0];
		expect(s.missing).toEqual([1]);
	});

	test('a matrix axis out of both ranges takes the unit option', () => {
		const text = 'id,200,202,204\nR1,1,2,3\n';
		refusal(() => parseSpectrumFile(bytes(text), 'raman.csv', { minPoints: 3 }), 'unknown-unit', 1);
		expect(parseSpectrumFile(bytes(text), 'raman.csv', { minPoints: 3, unit: 'cm-1' }).spectra[0].unit).toBe('cm-1');
	});

	test('a row with a different number of columns is refused with its line', () => {
		refusal(() => parse('err-shape.csv'), 'csv-shape', 3);
	});

	test('text in a spectral cell is refused with its line', () => {
		refusal(() => parseSpectrumFile(bytes('id,1100,1102,1104\nA,1,2,3\nB,1,x,3\n'), 'm.csv', { minPoints: 3 }), 'bad-number', 3);
	});

	test('a header without spectra is refused', () => {
		refusal(() => parseSpectrumFile(bytes('id,1100,1102,1104\n'), 'm.csv', { minPoints: 3 }), 'csv-shape', 1);
	});
});

describe('format detection by content', () => {
	test('JCAMP-DX, CSV, or neither — whatever the file is called', () => {
		expect(detectFormat(fixture('enc-affn.jdx'), 'spectrum.csv')).toBe('jcamp');
		expect(detectFormat(fixture('matrix.csv'), 'spectrum.jdx')).toBe('csv');
		expect(detectFormat(fixture('xy-wavenumber.tsv'), 'a.tsv')).toBe('csv');
		expect(detectFormat(fixture('err-unknown.txt'), 'a.csv')).toBeNull();
		expect(detectFormat(fixture('err-binary.spc'), 'a.jdx')).toBeNull();
		expect(detectFormat(new Uint8Array(0), 'a.jdx')).toBeNull();
	});
});
