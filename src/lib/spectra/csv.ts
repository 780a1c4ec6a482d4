// CSV/TSV spectra through papaparse: a two-column x,y file, or a matrix with one spectrum per row
// whose numeric column headers form the axis (the layout the `lotgate` command line reads).
//
// Axis unit rule, in this order:
//   1. a unit named in the x column's header of an x,y file: "nm"/"nanometers" → nm;
//      "cm-1", "cm^-1", "1/cm", "wavenumber", "raman shift" → cm-1; "um", "µm", "micrometers" → um;
//   2. otherwise the caller's `unit` option (the material's method knows its unit);
//   3. otherwise the axis range: all within 700..3000 → nm (NIR wavelengths),
//      all within 3000..15000 → cm-1 (NIR wavenumbers); anything else is refused as unknown-unit.
import Papa from 'papaparse';
import { SpectrumFileError } from './errors';
import type { AxisUnit, ParsedFile, ParsedSpectrum, ParseOptions } from './types';
import { checkSpectrum } from './validate';

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const DECIMAL_COMMA = /^[+-]?(\d*,\d+|\d+,)([eE][+-]?\d+)?$/;
// Spellings of "no value" that instruments and spreadsheets write.
const GAP = /^(|[+-]?inf(inity)?|nan|na|n\/a|#n\/a|-|\?)$/i;

type Cell = { kind: 'number'; value: number } | { kind: 'gap' } | { kind: 'text' };

function cellOf(raw: string, decimalComma: boolean): Cell {
	let s = raw.trim();
	if (decimalComma && DECIMAL_COMMA.test(s)) s = s.replace(',', '.');
	if (NUMBER.test(s)) return { kind: 'number', value: Number(s) };
	if (GAP.test(s)) return { kind: 'gap' };
	return { kind: 'text' };
}

export function unitHint(header: string): AxisUnit | null {
	const h = header.toLowerCase();
	if (/cm\s*(\^?\s*-\s*1|⁻¹|−1)|1\s*\/\s*cm|wavenumber|raman\s*shift/.test(h)) return 'cm-1';
	if (/(^|[^a-z])(um|µm|μm|micromet(er|re)s?|microns?)([^a-z]|$)/.test(h)) return 'um';
	if (/(^|[^a-z])(nm|nanomet(er|re)s?)([^a-z]|$)/.test(h)) return 'nm';
	return null;
}

function unitByRange(axis: Float64Array, file: string, line: number | undefined): AxisUnit {
	let lo = Infinity;
	let hi = -Infinity;
	for (const x of axis) {
		lo = Math.min(lo, x);
		hi = Math.max(hi, x);
	}
	if (lo >= 700 && hi <= 3000) return 'nm';
	if (lo >= 3000 && hi <= 15000) return 'cm-1';
	throw new SpectrumFileError(
		'unknown-unit',
		file,
		`cannot tell the axis unit of ${lo}–${hi}: name it in the header (e.g. "wavelength_nm" or "wavenumber_cm-1"), or choose the unit when uploading`,
		line
	);
}

interface Row {
	cells: string[];
	line: number;
}

/** `text` as returned by readText (already refused when empty or binary). */
export function parseCsv(text: string, file: string, options: ParseOptions = {}): ParsedFile {
	const { allowGaps = false, minPoints = 50 } = options;
	// Papa guesses the delimiter from the first rows, blank lines aside; ';' and tab go first because
	// with a decimal comma ',' would also split every row evenly.
	const guess = Papa.parse<string[]>(text, { header: false, skipEmptyLines: 'greedy', preview: 10, delimitersToGuess: [';', '\t', ',', '|'] });
	const delimiter = guess.errors.some((e) => e.code === 'UndetectableDelimiter') ? null : guess.meta.delimiter;
	if (delimiter === null)
		throw new SpectrumFileError('csv-shape', file, 'no column delimiter found; expected x,y columns or one spectrum per row, separated by commas, semicolons or tabs', 1);
	// Blank lines kept here so that row i is line i + 1 (spectral exports do not quote line breaks).
	const parsed = Papa.parse<string[]>(text, { header: false, skipEmptyLines: false, dynamicTyping: false, delimiter });
	const quoteError = parsed.errors.find((e) => e.type === 'Quotes');
	if (quoteError) throw new SpectrumFileError('csv-shape', file, `a quoted field is not closed (${quoteError.message})`, (quoteError.row ?? 0) + 1);
	const decimalComma = delimiter !== ',';
	const rows: Row[] = [];
	parsed.data.forEach((cells, i) => {
		if (!cells.every((c) => c.trim() === '')) rows.push({ cells, line: i + 1 });
	});
	if (rows.length === 0) throw new SpectrumFileError('empty', file, 'the file contains no rows');
	const width = (r: Row) => {
		let n = r.cells.length;
		while (n > 1 && r.cells[n - 1].trim() === '') n--; // a trailing delimiter is harmless
		return n;
	};
	const cols = width(rows[0]);
	if (cols < 2)
		throw new SpectrumFileError('csv-shape', file, 'the first line has a single column; expected x,y columns or one spectrum per row separated by commas, semicolons or tabs', rows[0].line);
	const header = rows[0].cells.slice(0, cols).map((c) => c.trim());
	for (const r of rows) {
		const w = width(r);
		if (w > cols || r.cells.length < cols)
			throw new SpectrumFileError('csv-shape', file, `the line has ${w} columns but the first line has ${cols}`, r.line);
	}
	return cols === 2 ? xyFile(rows, header, file, decimalComma, { allowGaps, minPoints, unit: options.unit }) : matrixFile(rows, header, file, decimalComma, { allowGaps, minPoints, unit: options.unit });
}

type Opts = { allowGaps: boolean; minPoints: number; unit?: AxisUnit };

function xyFile(rows: Row[], header: string[], file: string, decimalComma: boolean, o: Opts): ParsedFile {
	const hasHeader = cellOf(header[0], decimalComma).kind !== 'number';
	const data = hasHeader ? rows.slice(1) : rows;
	const axis = new Float64Array(data.length);
	const values = new Float64Array(data.length);
	data.forEach((r, i) => {
		const x = cellOf(r.cells[0], decimalComma);
		if (x.kind === 'text') throw new SpectrumFileError('bad-number', file, `the x value "${r.cells[0].trim().slice(0, 30)}" is not a number`, r.line);
		if (x.kind === 'gap') throw new SpectrumFileError('non-finite', file, `the x value "${r.cells[0].trim()}" is missing; every point needs its wavelength or wavenumber`, r.line);
		const y = cellOf(r.cells[1], decimalComma);
		if (y.kind === 'text') throw new SpectrumFileError('bad-number', file, `the y value "${r.cells[1].trim().slice(0, 30)}" is not a number`, r.line);
		axis[i] = x.value;
		values[i] = y.kind === 'number' ? y.value : Number.NaN;
	});
	const lineOf = (i: number) => data[i]?.line;
	const missing = checkSpectrum(axis, values, { file, allowGaps: o.allowGaps, minPoints: o.minPoints, lineOf });
	const unit = (hasHeader ? unitHint(header[0]) : null) ?? o.unit ?? unitByRange(axis, file, hasHeader ? rows[0].line : undefined);
	const spectrum: ParsedSpectrum = {
		id: null,
		axis,
		values,
		unit,
		yUnit: hasHeader && header[1] !== '' ? header[1] : null,
		title: null,
		meta: {},
		acquiredAt: null,
		technique: null,
		missing,
		line: data[0]?.line
	};
	return { format: 'csv-xy', fileName: file, spectra: [spectrum] };
}

function matrixFile(rows: Row[], header: string[], file: string, decimalComma: boolean, o: Opts): ParsedFile {
	const headerLine = rows[0].line;
	const axisCols: number[] = [];
	const metaCols: number[] = [];
	const axisValues: number[] = [];
	header.forEach((h, i) => {
		const c = cellOf(h, decimalComma);
		if (c.kind === 'number') {
			axisCols.push(i);
			axisValues.push(c.value);
		} else metaCols.push(i);
	});
	if (axisCols.length === 0)
		throw new SpectrumFileError('csv-shape', file, 'no column header is a number, so there is no spectral axis; a matrix needs the wavelengths or wavenumbers as column headers', headerLine);
	const axis = Float64Array.from(axisValues);
	const unit = o.unit ?? unitByRange(axis, file, headerLine);
	const metaColumns = metaCols.map((i) => header[i]);
	const spectra: ParsedSpectrum[] = [];
	for (const r of rows.slice(1)) {
		const values = new Float64Array(axisCols.length);
		axisCols.forEach((c, k) => {
			const v = cellOf(r.cells[c] ?? '', decimalComma);
			if (v.kind === 'text') throw new SpectrumFileError('bad-number', file, `column "${header[c]}" holds "${(r.cells[c] ?? '').trim().slice(0, 30)}", which is not a number`, r.line);
			values[k] = v.kind === 'number' ? v.value : Number.NaN;
		});
		const meta: Record<string, string> = {};
		for (const c of metaCols) meta[header[c]] = (r.cells[c] ?? '').trim();
		const id = metaCols.length > 0 && meta[header[metaCols[0]]] !== '' ? meta[header[metaCols[0]]] : null;
		const missing = checkSpectrum(axis, values, {
			file,
			allowGaps: o.allowGaps,
			minPoints: o.minPoints,
			lineOf: () => r.line,
			axisLineOf: () => headerLine,
			label: id !== null ? `spectrum "${id}"` : undefined
		});
		spectra.push({ id, axis, values, unit, yUnit: null, title: null, meta, acquiredAt: null, technique: null, missing, line: r.line });
	}
	if (spectra.length === 0) throw new SpectrumFileError('csv-shape', file, 'the file has a header line but no spectra below it', headerLine);
	return { format: 'csv-matrix', fileName: file, spectra, metaColumns };
}
