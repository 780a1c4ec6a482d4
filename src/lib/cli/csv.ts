import Papa from 'papaparse';
import type { AxisUnit } from '../analysis';

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
	headers: string[];
	axisColumns: number[];
	idColumn: number | null;
	spectra: CsvSpectrum[];
}

const isNumberHeader = (h: string): boolean => h.trim() !== '' && Number.isFinite(Number(h.trim()));

/**
 * One spectrum per row. Columns whose header parses as a number form the axis; the others are
 * metadata; the id column defaults to the first non-numeric column. Blank spectral cells become
 * NaN only when `blankAsNaN` (screening reports them); text in a spectral cell is always an error.
 */
export function readSpectraCsv(text: string, file: string, options: { unit?: AxisUnit; idColumn?: string; blankAsNaN?: boolean; required?: string[] } = {}): CsvTable {
	const { unit = 'nm', blankAsNaN = false } = options;
	const parsed = Papa.parse<string[]>(text.replace(/^\uFEFF/, ''), { header: false, skipEmptyLines: 'greedy', dynamicTyping: false });
	const err = parsed.errors.find((e) => e.type !== 'Delimiter');
	if (err) throw new CliError(`${file}: line ${(err.row ?? 0) + 1}: ${err.message}`);
	const rows = parsed.data;
	if (rows.length < 2) throw new CliError(`${file}: needs a header line and at least one spectrum`);
	const headers = rows[0].map((h) => h.trim());
	const axisColumns = headers.flatMap((h, i) => (isNumberHeader(h) ? [i] : []));
	if (axisColumns.length < 2) throw new CliError(`${file}: line 1: fewer than 2 column headers parse as numbers, so there is no spectral axis`);
	for (const name of options.required ?? [])
		if (!headers.includes(name)) throw new CliError(`${file}: line 1: no column named "${name}" (columns: ${headers.filter((h) => !isNumberHeader(h)).join(', ') || 'none besides the axis'})`);
	let idColumn: number | null;
	if (options.idColumn !== undefined) {
		idColumn = headers.indexOf(options.idColumn);
		if (idColumn < 0) throw new CliError(`${file}: line 1: no id column named "${options.idColumn}"`);
	} else {
		const first = headers.findIndex((h) => !isNumberHeader(h));
		idColumn = first < 0 ? null : first;
	}
	const axis = Float64Array.from(axisColumns.map((i) => Number(headers[i])));
	const spectra: CsvSpectrum[] = [];
	for (let r = 1; r < rows.length; r++) {
		const row = rows[r];
		const line = r + 1;
		if (row.length !== headers.length) throw new CliError(`${file}: line ${line}: has ${row.length} columns, the header has ${headers.length}`);
		const values = new Float64Array(axisColumns.length);
		axisColumns.forEach((c, k) => {
			const cell = row[c].trim();
			if (cell === '') {
				if (!blankAsNaN) throw new CliError(`${file}: line ${line}, column ${c + 1} ("${headers[c]}"): empty spectral value`);
				values[k] = Number.NaN;
				return;
			}
			const v = Number(cell);
			if (Number.isNaN(v) && !/^nan$/i.test(cell)) throw new CliError(`${file}: line ${line}, column ${c + 1} ("${headers[c]}"): "${cell}" is not a number`);
			if (!Number.isFinite(v) && !blankAsNaN) throw new CliError(`${file}: line ${line}, column ${c + 1} ("${headers[c]}"): "${cell}" is not a finite number`);
			values[k] = v;
		});
		const meta: Record<string, string> = {};
		headers.forEach((h, i) => {
			if (!isNumberHeader(h)) meta[h] = row[i].trim();
		});
		const id = idColumn === null ? `line ${line}` : row[idColumn].trim() || `line ${line}`;
		spectra.push({ id, line, axis, values, unit, meta });
	}
	return { file, headers, axisColumns, idColumn, spectra };
}
