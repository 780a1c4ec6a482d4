// Checks every parsed spectrum passes, whatever the format it came from.
import { SpectrumFileError } from './errors';

export interface SpectrumChecks {
	file: string;
	allowGaps: boolean;
	minPoints: number;
	/** 1-based file line of point i, where the format knows it. */
	lineOf?: (i: number) => number | undefined;
	/** 1-based file line of axis value i (a CSV matrix's header); defaults to `lineOf`. */
	axisLineOf?: (i: number) => number | undefined;
	/** Says which spectrum is meant when a file holds several ("row 12 (id LAC-001)"). */
	label?: string;
}

/** Validates axis and values in place and returns the indices of non-finite values (allowed gaps). */
export function checkSpectrum(axis: Float64Array, values: Float64Array, c: SpectrumChecks): number[] {
	const { file, allowGaps, minPoints, lineOf = () => undefined } = c;
	const axisLineOf = c.axisLineOf ?? lineOf;
	const who = c.label ? `${c.label}: ` : '';
	if (axis.length < minPoints)
		throw new SpectrumFileError('too-few-points', file, `${who}the spectrum has ${axis.length} point${axis.length === 1 ? '' : 's'}; at least ${minPoints} are needed`, axisLineOf(0));
	for (let i = 0; i < axis.length; i++)
		if (!Number.isFinite(axis[i])) throw new SpectrumFileError('non-finite', file, `${who}axis value ${i + 1} is not a finite number`, axisLineOf(i));
	const dir = Math.sign(axis[1] - axis[0]);
	for (let i = 1; i < axis.length; i++) {
		const d = axis[i] - axis[i - 1];
		if (d === 0) throw new SpectrumFileError('axis-duplicate', file, `${who}the axis value ${axis[i]} appears twice (points ${i} and ${i + 1}); each wavelength or wavenumber must appear once`, axisLineOf(i));
		if (Math.sign(d) !== dir)
			throw new SpectrumFileError('axis-not-monotonic', file, `${who}the axis turns back at ${axis[i]} (point ${i + 1}): it must rise or fall throughout`, axisLineOf(i));
	}
	const missing: number[] = [];
	for (let i = 0; i < values.length; i++) {
		if (Number.isFinite(values[i])) continue;
		if (!allowGaps)
			throw new SpectrumFileError('non-finite', file, `${who}the value at ${axis[i]} is missing or not a finite number; this material's method does not allow gaps`, lineOf(i));
		values[i] = Number.NaN;
		missing.push(i);
	}
	if (missing.length === values.length) throw new SpectrumFileError('non-finite', file, `${who}the spectrum has no finite values at all`, lineOf(0));
	return missing;
}
