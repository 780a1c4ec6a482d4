// Typed refusal of a spectrum file: `code` is stable for callers, `message` is for the technician.

/** Every refusal code the parsers use, exported so callers test membership instead of copying the list. */
export const SPECTRUM_ERROR_CODES = [
	'empty',
	'binary',
	'unknown-format',
	'truncated',
	'npoints-mismatch',
	'firstx-mismatch',
	'lastx-mismatch',
	'x-check',
	'firsty-mismatch',
	'checkvalue',
	'axis-not-monotonic',
	'axis-duplicate',
	'non-finite',
	'too-few-points',
	'unknown-unit',
	'peak-table',
	'unsupported-table',
	'multi-block',
	'link-block',
	'missing-label',
	'unsupported-version',
	'bad-number',
	'csv-shape'
] as const;

export type SpectrumErrorCode = (typeof SPECTRUM_ERROR_CODES)[number];

const CODES: ReadonlySet<string> = new Set(SPECTRUM_ERROR_CODES);
/** True for a code a spectrum parser refuses a file with (the file is not a readable spectrum). */
export const isSpectrumErrorCode = (code: string): code is SpectrumErrorCode => CODES.has(code);

export class SpectrumFileError extends Error {
	readonly code: SpectrumErrorCode;
	readonly file: string;
	readonly line?: number;
	/** The problem alone, without the file and line prefix (for tables that show those separately). */
	readonly problem: string;

	constructor(code: SpectrumErrorCode, file: string, problem: string, line?: number) {
		super(`${file}${line !== undefined ? `, line ${line}` : ''}: ${problem}`);
		this.name = 'SpectrumFileError';
		this.code = code;
		this.file = file;
		this.problem = problem;
		if (line !== undefined) this.line = line;
	}

	toJSON(): { code: SpectrumErrorCode; message: string; file: string; line?: number } {
		return { code: this.code, message: this.message, file: this.file, ...(this.line !== undefined ? { line: this.line } : {}) };
	}
}
