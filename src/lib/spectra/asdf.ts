// Our reading of (X++(Y..Y)) lines, the only decoder of JCAMP-DX ordinates: it also checks what a general-purpose
// converter does not (the DIF check value, the X at the start of each line, NPOINTS, characters skipped silently).
// Rules: McDonald & Wilks 1988, §5 (AFFN, PAC, SQZ, DIF, DUP; the Y check value in DIF form).
import { SpectrumFileError } from './errors';

export type Encoding = 'AFFN' | 'PAC' | 'SQZ' | 'DIF' | 'DUP';

export interface DataLine {
	/** 1-based line in the file. */
	line: number;
	/** The X written at the start of the line (before XFACTOR). */
	x: number;
	/** Index of the point that X belongs to: the check point when the line starts with one. */
	index: number;
}

export interface DecodedTable {
	/** Raw ordinates (before YFACTOR); NaN where the file has "?". */
	y: number[];
	/** 1-based file line of each ordinate. */
	lineOf: number[];
	lines: DataLine[];
	encodings: Set<Encoding>;
	/** Whether the last line was a check value on its own (the standard's closing line in DIF form). */
	endsWithCheckLine: boolean;
}

// Tokens of one line, in reusable buffers: a 20 MB file holds millions of values, and one object
// per value made decoding several times slower.
const ABS = 0;
const DIF = 1;
const DUPK = 2;
const MISSING = 3;
const ENC_AFFN = 0;
const ENC_PAC = 1;
const ENC_SQZ = 2;
let kinds = new Uint8Array(128);
let encs = new Uint8Array(128);
let vals = new Float64Array(128);
let cols = new Uint32Array(128);

function ensure(n: number): void {
	if (n <= kinds.length) return;
	const size = Math.max(n, kinds.length * 2);
	kinds = new Uint8Array(size);
	encs = new Uint8Array(size);
	vals = new Float64Array(size);
	cols = new Uint32Array(size);
}

const SQZ_POS = '@ABCDEFGHI';
const SQZ_NEG = '@abcdefghi';
const DIF_POS = '%JKLMNOPQR';
const DIF_NEG = '%jklmnopqr';
const DUP = '@STUVWXYZs';

function isDigit(c: string): boolean {
	return c >= '0' && c <= '9';
}

/** Digits (and at most one '.') after a leading digit given by an ASDF letter or a sign. */
function readDigits(s: string, i: number): { text: string; end: number } {
	let j = i;
	let dot = false;
	while (j < s.length && (isDigit(s[j]) || (s[j] === '.' && !dot))) {
		if (s[j] === '.') dot = true;
		j++;
	}
	return { text: s.slice(i, j), end: j };
}

/** End of an AFFN/PAC number starting at i ([+-]digits[.digits] or [+-].digits), or -1. */
function numberEnd(s: string, i: number): number {
	let j = i;
	if (s[j] === '+' || s[j] === '-') j++;
	let digits = 0;
	while (j < s.length && isDigit(s[j])) ((j++), digits++);
	if (s[j] === '.') {
		j++;
		while (j < s.length && isDigit(s[j])) ((j++), digits++);
	}
	return digits > 0 ? j : -1;
}

/** Tokenizes one line into the buffers; returns its X and the number of tokens, or null when blank. */
function tokenizeLine(s: string, file: string, line: number): { x: number; count: number } | null {
	const fail = (problem: string): never => {
		throw new SpectrumFileError('bad-number', file, problem, line);
	};
	let i = 0;
	const skip = () => {
		while (i < s.length && (s[i] === ' ' || s[i] === '\t')) i++;
	};
	skip();
	if (i >= s.length) return null;
	const xEnd = numberEnd(s, i);
	if (xEnd < 0) fail(`a data line must start with its X value, found "${s.slice(i, i + 12)}"`);
	const x = Number(s.slice(i, xEnd));
	i = xEnd;
	ensure(s.length);
	let n = 0;
	const push = (kind: number, value: number, col: number, enc = ENC_AFFN) => {
		kinds[n] = kind;
		vals[n] = value;
		cols[n] = col;
		encs[n] = enc;
		n++;
	};
	for (;;) {
		skip();
		if (i >= s.length) break;
		const c = s[i];
		const col = i + 1;
		if (c === ',' || c === ';') fail(`"${c}" in the data table: values must be separated by blanks or signs (a decimal comma is not allowed in JCAMP-DX)`);
		// "1.5E-3" would read as SQZ E (=5) and PAC −3: refuse rather than decode it wrongly.
		if ((c === 'E' || c === 'e') && i > 0 && (isDigit(s[i - 1]) || s[i - 1] === '.') && (s[i + 1] === '+' || s[i + 1] === '-') && isDigit(s[i + 2] ?? ''))
			fail(`the value near "${s.slice(Math.max(0, i - 6), i + 4)}" uses exponent notation, which the data table does not allow; use ##YFACTOR= instead`);
		if (c === '?') {
			push(MISSING, Number.NaN, col);
			i++;
			continue;
		}
		if (isDigit(c) || c === '.' || c === '+' || c === '-') {
			const end = numberEnd(s, i);
			if (end < 0) fail(`"${c}" is not followed by a number (column ${col})`);
			const explicitSign = c === '+' || c === '-';
			const prevIsValue = i > 0 && s[i - 1] !== ' ' && s[i - 1] !== '\t';
			push(ABS, Number(s.slice(i, end)), col, explicitSign && prevIsValue ? ENC_PAC : ENC_AFFN);
			i = end;
			continue;
		}
		let lead = SQZ_POS.indexOf(c);
		let sign = 1;
		let kind: 'abs' | 'dif' | 'dup' | null = null;
		if (lead >= 0) kind = 'abs';
		else if ((lead = SQZ_NEG.indexOf(c)) > 0) ((kind = 'abs'), (sign = -1));
		else if ((lead = DIF_POS.indexOf(c)) >= 0) kind = 'dif';
		else if ((lead = DIF_NEG.indexOf(c)) > 0) ((kind = 'dif'), (sign = -1));
		else if ((lead = DUP.indexOf(c)) > 0) kind = 'dup';
		if (kind === null) fail(`unexpected character "${c}" (column ${col}) in the data table`);
		const { text, end } = readDigits(s, i + 1);
		const value = sign * Number(`${lead}${text}`);
		if (!Number.isFinite(value)) fail(`"${s.slice(i, end)}" is not a valid compressed value (column ${col})`);
		i = end;
		if (kind === 'abs') push(ABS, value, col, ENC_SQZ);
		else if (kind === 'dif') push(DIF, value, col);
		else {
			if (!Number.isInteger(value) || value < 1) fail(`"${s.slice(col - 1, end)}" is not a valid repeat count (column ${col})`);
			push(DUPK, value, col);
		}
	}
	return { x, count: n };
}

function tooMany(line: number, limit: number, file: string): never {
	throw new SpectrumFileError('npoints-mismatch', file, `the data table holds more values than the ${limit} points that ##NPOINTS= announces`, line);
}

const sameValue = (a: number, b: number) => Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(a), Math.abs(b));

/**
 * Decodes the lines of one (X++(Y..Y)) table. `lines` are the table's text lines with their
 * 1-based file line numbers. Throws `bad-number` or `checkvalue` with the offending line, and
 * `npoints-mismatch` as soon as more than `limit` values appear (a corrupt repeat count cannot run away).
 */
export function decodeXYData(lines: { text: string; line: number }[], file: string, limit: number): DecodedTable {
	const y: number[] = [];
	const lineOf: number[] = [];
	const out: DataLine[] = [];
	const encodings = new Set<Encoding>();
	let last = Number.NaN;
	let lastDiff = 0;
	let lastKind: 'abs' | 'dif' | null = null;
	let endsWithCheckLine = false;
	for (const { text, line } of lines) {
		const cut = text.indexOf('$$');
		const tl = tokenizeLine(cut >= 0 ? text.slice(0, cut) : text, file, line);
		if (tl === null) continue;
		const { x, count } = tl;
		if (count === 0) throw new SpectrumFileError('bad-number', file, `the line holds an X value (${x}) but no Y values`, line);
		let start = 0;
		let index = y.length;
		// In DIF form each line repeats the previous line's last Y as a check: verify it, then drop it.
		if (lastKind === 'dif') {
			if (kinds[0] !== ABS)
				throw new SpectrumFileError('checkvalue', file, `the previous line ended in difference (DIF) form, so this line must start with the last Y value again as a check; found a ${kinds[0] === DIF ? 'difference' : kinds[0] === DUPK ? 'repeat count' : '"?"'} instead`, line);
			if (!sameValue(vals[0], last))
				throw new SpectrumFileError('checkvalue', file, `the check value ${vals[0]} at the start of the line does not match the last Y value ${last} of the previous line; the compressed data are corrupt`, line);
			start = 1;
			index = y.length - 1;
			lastKind = 'abs';
		}
		out.push({ line, x, index });
		endsWithCheckLine = start === 1 && count === 1;
		let prevOnLine: 'abs' | 'dif' | null = null;
		for (let k = start; k < count; k++) {
			const kind = kinds[k];
			if (kind === ABS) {
				encodings.add(encs[k] === ENC_SQZ ? 'SQZ' : encs[k] === ENC_PAC ? 'PAC' : 'AFFN');
				last = vals[k];
				lastKind = 'abs';
				prevOnLine = 'abs';
				y.push(last);
				lineOf.push(line);
			} else if (kind === MISSING) {
				last = Number.NaN;
				lastKind = 'abs';
				prevOnLine = 'abs';
				y.push(Number.NaN);
				lineOf.push(line);
			} else if (kind === DIF) {
				encodings.add('DIF');
				if (Number.isNaN(last)) throw new SpectrumFileError('bad-number', file, `a difference (DIF) value at column ${cols[k]} has no preceding Y value to add to`, line);
				last += vals[k];
				lastDiff = vals[k];
				lastKind = 'dif';
				prevOnLine = 'dif';
				y.push(last);
				lineOf.push(line);
			} else {
				encodings.add('DUP');
				if (prevOnLine === null) throw new SpectrumFileError('bad-number', file, `a repeat count (DUP) at column ${cols[k]} has no preceding Y value on the line to repeat`, line);
				const reps = vals[k];
				if (y.length + reps - 1 > limit) tooMany(line, limit, file);
				for (let r = 1; r < reps; r++) {
					if (prevOnLine === 'dif') last += lastDiff;
					y.push(last);
					lineOf.push(line);
				}
			}
			if (y.length > limit) tooMany(line, limit, file);
		}
	}
	return { y, lineOf, lines: out, encodings, endsWithCheckLine };
}
