// Fixture access for the spectrum parser tests.
import { readFileSync } from 'node:fs';
import { expect } from 'vitest';
import { SpectrumFileError, type SpectrumErrorCode } from '../../../src/lib/spectra';

export const fixture = (name: string): Uint8Array => new Uint8Array(readFileSync(new URL(`../../../fixtures/spectra/${name}`, import.meta.url)));

export const bytes = (text: string): Uint8Array => new TextEncoder().encode(text);

/** Runs `fn`, expecting a SpectrumFileError with this code (and line, when given); returns it. */
export function refusal(fn: () => unknown, code: SpectrumErrorCode, line?: number): SpectrumFileError {
	let caught: unknown;
	try {
		fn();
	} catch (e) {
		caught = e;
	}
	expect(caught, `expected a refusal with code ${code}`).toBeInstanceOf(SpectrumFileError);
	const err = caught as SpectrumFileError;
	expect(err.code).toBe(code);
	if (line !== undefined) expect(err.line).toBe(line);
	return err;
}

/** A minimal valid JCAMP-DX file around some (X++(Y..Y)) lines; the data start on line 15. */
export function jcamp(data: string, labels: { firstx?: number; lastx: number; npoints: number; yfactor?: number; xunits?: string }): string {
	return [
		'##TITLE=inline test',
		'##JCAMP-DX=5.01',
		'##DATA TYPE=INFRARED SPECTRUM',
		'##ORIGIN=Lotgate tests',
		'##OWNER=public domain',
		`##XUNITS=${labels.xunits ?? 'NANOMETERS'}`,
		'##YUNITS=ABSORBANCE',
		'##XFACTOR=1',
		`##YFACTOR=${labels.yfactor ?? 1}`,
		`##FIRSTX=${labels.firstx ?? 100}`,
		`##LASTX=${labels.lastx}`,
		`##NPOINTS=${labels.npoints}`,
		'##$NOTE=inline',
		'##XYDATA=(X++(Y..Y))',
		data,
		'##END=',
		''
	].join('\n');
}
