// Each refusal with a file that triggers it: code, file name and line. Data lines of the
// hand-written JCAMP-DX fixtures start on line 15 (labels per McDonald & Wilks 1988, §5).
import { describe, expect, test } from 'vitest';
import { isSpectrumErrorCode, parseSpectrumFile, SPECTRUM_ERROR_CODES, SpectrumFileError, type SpectrumErrorCode } from '../../../src/lib/spectra';
import { bytes, fixture, jcamp, refusal } from './helpers';

const cases: [file: string, code: SpectrumErrorCode, line: number | undefined, options?: { minPoints?: number }][] = [
	['err-empty.jdx', 'empty', undefined],
	['err-blank.csv', 'empty', undefined],
	['err-binary.spc', 'binary', undefined],
	['err-unknown.txt', 'unknown-format', undefined],
	['err-no-axis.csv', 'unknown-format', undefined],
	['err-truncated.jdx', 'truncated', 16],
	['err-npoints.jdx', 'npoints-mismatch', 12],
	['err-npoints-dup.jdx', 'npoints-mismatch', 15],
	['err-firstx.jdx', 'firstx-mismatch', 15],
	['err-lastx.jdx', 'lastx-mismatch', 16],
	['err-xcheck.jdx', 'x-check', 17],
	['err-firsty.jdx', 'firsty-mismatch', 13],
	['err-checkvalue.jdx', 'checkvalue', 16],
	['err-checkvalue-dif.jdx', 'checkvalue', 16],
	['err-duplicate-axis.jdx', 'axis-duplicate', 15],
	['err-duplicate.csv', 'axis-duplicate', 4, { minPoints: 3 }],
	['err-not-monotonic.csv', 'axis-not-monotonic', 4, { minPoints: 3 }],
	['err-nan.csv', 'non-finite', 3, { minPoints: 3 }],
	['gap-question-mark.jdx', 'non-finite', 15, { minPoints: 3 }],
	['err-too-few.csv', 'too-few-points', 2, {}],
	['enc-affn.jdx', 'too-few-points', 12, {}],
	['err-unit.jdx', 'unknown-unit', 6],
	['err-unit.csv', 'unknown-unit', undefined, { minPoints: 3 }],
	['err-peak-table.jdx', 'peak-table', 13],
	['err-xypoints.jdx', 'peak-table', 13],
	['err-xydata-pairs.jdx', 'unsupported-table', 13],
	['err-ntuples.jdx', 'unsupported-table', 3],
	['err-multi-block.jdx', 'multi-block', 3],
	['err-two-titles.jdx', 'multi-block', 18],
	['err-link-block.jdx', 'link-block', 3],
	['err-missing-label.jdx', 'missing-label', 13],
	['err-no-version.jdx', 'missing-label', 2],
	['err-version.jdx', 'unsupported-version', 2],
	['err-bad-number-label.jdx', 'bad-number', 10],
	['err-bad-number-data.jdx', 'bad-number', 16],
	['err-exponent.jdx', 'bad-number', 15],
	['err-comma.jdx', 'bad-number', 15],
	['err-bad-number.csv', 'bad-number', 3, { minPoints: 2 }],
	['err-shape.csv', 'csv-shape', 3],
	['err-one-column.csv', 'unknown-format', undefined]
];

describe('refusals name the file, the line where known, and the problem', () => {
	test.each(cases)('%s → %s (line %s)', (file, code, line, options) => {
		// The hand-written files are short; only the too-few-points cases keep the default of 50.
		const err = refusal(() => parseSpectrumFile(fixture(file), file, options ?? { minPoints: 3 }), code);
		expect(err.file).toBe(file);
		expect(err.line).toBe(line);
		expect(err.message.startsWith(line === undefined ? `${file}: ` : `${file}, line ${line}: `)).toBe(true);
		expect(err.problem.length).toBeGreaterThan(15);
		expect(err.toJSON()).toMatchObject({ code, file, message: err.message });
	});

	test('every code the brief lists has a triggering file', () => {
		const listed: SpectrumErrorCode[] = ['empty', 'binary', 'unknown-format', 'truncated', 'npoints-mismatch', 'firstx-mismatch', 'lastx-mismatch', 'checkvalue', 'axis-not-monotonic', 'axis-duplicate', 'non-finite', 'too-few-points', 'unknown-unit', 'peak-table', 'multi-block', 'link-block', 'missing-label', 'bad-number', 'csv-shape'];
		const covered = new Set(cases.map((c) => c[1]));
		expect(listed.filter((c) => !covered.has(c))).toEqual([]);
	});

	test('the exported code list (what the scan path tests membership with) holds every code a file triggers, and nothing else', () => {
		const triggered = [...new Set(cases.map((c) => c[1]))].sort();
		expect([...SPECTRUM_ERROR_CODES].sort()).toEqual(triggered);
		expect(triggered.every(isSpectrumErrorCode)).toBe(true);
		// the intake's own refusals are not parser codes: such a scan is refused, not kept as unreadable evidence
		for (const code of ['too-large', 'duplicate', 'wrong-technique', 'conflict']) expect(isSpectrumErrorCode(code)).toBe(false);
	});

	test('messages are in plain words', () => {
		const e = refusal(() => parseSpectrumFile(fixture('err-truncated.jdx'), 'lot7-C02.jdx'), 'truncated');
		expect(e.message).toBe('lot7-C02.jdx, line 16: the file ends without ##END=; it is incomplete (interrupted export or upload?)');
		expect(e).toBeInstanceOf(SpectrumFileError);
		expect(e.name).toBe('SpectrumFileError');
	});

	test('a malformed repeat count cannot run away (DUP far beyond NPOINTS is refused at once)', () => {
		const t0 = performance.now();
		refusal(() => parseSpectrumFile(bytes(jcamp('100A1s999999999999', { lastx: 198, npoints: 50 })), 'dup.jdx'), 'npoints-mismatch', 15);
		expect(performance.now() - t0).toBeLessThan(200);
	});

	test('minPoints: NPOINTS below it is refused before decoding', () => {
		refusal(() => parseSpectrumFile(bytes(jcamp('100 1 2 3 4', { lastx: 106, npoints: 4 })), 'short.jdx'), 'too-few-points', 12);
		expect(parseSpectrumFile(bytes(jcamp('100 1 2 3 4', { lastx: 106, npoints: 4 })), 'short.jdx', { minPoints: 4 }).spectra[0].values).toHaveLength(4);
	});
});
