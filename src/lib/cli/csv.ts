// The command line's CSV files read through the one CSV reader (src/lib/spectra/csv.ts), as a matrix: one spectrum per
// row, numeric column headers as the axis. Delimiter, decimal comma, gap spellings, encodings and refusals are the
// upload's, so `lotgate` and the server read one file the same way. This module adds only what the command line asks
// of a table: named columns that must exist, the id column, and its own error type.
import type { AxisUnit } from '../analysis';
import { readText } from '../spectra/bytes';
import { parseCsv } from '../spectra/csv';
import { SpectrumFileError } from '../spectra/errors';
import type { ParsedFile } from '../spectra/types';

export class CliError extends Error {
	constructor(message: string) {
		super(message);
		this.name = 'CliError';
	}
}

export interface CsvSpectrum {
	id: string;
	/** 1-based line in the file. */
	line: number;
	axis: Float64Array;
	values: Float64Array;
	unit: AxisUnit;
	meta: Record<string, string>;
}

export interface CsvTable {
	file: string;
	/** The non-numeric columns, in file order. */
	metaColumns: string[];
	idColumn: string | null;
	spectra: CsvSpectrum[];
}

/** A parser refusal in the command line's words: "FILE: line N: problem". */
export const fileProblem = (e: SpectrumFileError) => `${e.line !== undefined ? `line ${e.line}: ` : ''}${e.problem}`;

/**
 * One spectrum per row. Columns whose header is a number form the axis (in `unit`, nm unless given); the others are
 * metadata; the id column defaults to the first of them, else the row is "line N". Missing values are gaps (NaN)
 * only when `blankAsNaN` (screening reports them); text in a spectral cell is always an error.
 */
export function readSpectraCsv(bytes: Uint8Array, file: string, options: { unit?: AxisUnit; idColumn?: string; blankAsNaN?: boolean; required?: string[] } = {}): CsvTable {
	const { unit = 'nm', blankAsNaN = false } = options;
	let parsed: ParsedFile;
	try {
		parsed = parseCsv(readText(bytes, file), file, { unit, allowGaps: blankAsNaN, minPoints: 2, layout: 'matrix' });
	} catch (e) {
		if (e instanceof SpectrumFileError) throw new CliError(`${file}: ${fileProblem(e)}`);
		throw e;
	}
	const metaColumns = parsed.metaColumns ?? [];
	const columns = () => metaColumns.join(', ') || 'none besides the axis';
	for (const name of options.required ?? []) if (!metaColumns.includes(name)) throw new CliError(`${file}: the header has no column named "${name}" (columns: ${columns()})`);
	if (options.idColumn !== undefined && !metaColumns.includes(options.idColumn)) throw new CliError(`${file}: the header has no id column named "${options.idColumn}" (columns: ${columns()})`);
	const idColumn = options.idColumn ?? metaColumns[0] ?? null;
	const spectra = parsed.spectra.map((s) => {
		const line = s.line ?? 0;
		return { id: (idColumn === null ? '' : s.meta[idColumn]) || `line ${line}`, line, axis: s.axis, values: s.values, unit: s.unit, meta: s.meta };
	});
	return { file, metaColumns, idColumn, spectra };
}
