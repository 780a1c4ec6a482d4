// CSV/TSV spectra through papaparse: a two-column x,y file, or a matrix with one spectrum per row
// whose numeric column headers form the axis (the layout the `lotgate` command line reads). The one CSV reader:
// uploads and the command line (src/lib/cli/csv.ts) both read through it, so a file reads the same everywhere.
//
// Delimiter: guessed among ';', tab, ',' and '|'. With ';', tab or '|' a decimal comma is read ("0,5" = 0.5).
// Gaps: an empty cell, NaN, NA, N/A, #N/A, -, ? or ±inf(inity) is a missing value (refused unless allowGaps).
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
	const { allowGaps = false, minPoints = 50, layout = 'auto' } = options;
	// Papa guesses the delimiter from the first rows, blank lines aside; ';' and tab go first because
	// with a decimal comma ',' would also split every row evenly.
	const guess = Papa.parse<string[]>(text, { header: false, skipEmptyLines: 'greedy', preview: 10, delimitersToGuess: [';', '\t', ',', '|'] });
	const delimiter = guess.errors.some((e) => e.code === 'UndetectableDelimiter') ? null : guess.meta.delimiter;
	if (delimiter === null)
		throw new SpectrumFileError('csv-shape', file, 'no column delimiter found; expected x,y columns or one spectrum per row, separated by commas, semicolons or tabs', 1);
	// Rows arrive one at a time (papaparse's step mode), so a large x,y file is never held as an array of string rows:
	// its numbers go straight into typed arrays. Blank rows are counted, so that row i is line i + 1 (spectral exports
	// do not quote line breaks). A matrix (one spectrum per row, few rows) keeps its rows.
	const decimalComma = delimiter !== ',';
	let lineNo = 0;
	let cols = 0;
	let header: string[] = [];
	let firstLine = 0;
	let xy: XyCollector | null = null;
	const rows: Row[] = [];
	let failure: unknown = null;
	const width = (cells: string[]) => {
		let n = cells.length;
		while (n > 1 && cells[n - 1].trim() === '') n--; // a trailing delimiter is harmless
		return n;
	};
	Papa.parse<string[]>(text, {
		header: false,
		skipEmptyLines: false,
		dynamicTyping: false,
		delimiter,
		step: (result, parser) => {
			lineNo++;
			try {
				const quoteError = result.errors.find((e) => e.type === 'Quotes');
				if (quoteError) throw new SpectrumFileError('csv-shape', file, `a quoted field is not closed (${quoteError.message})`, lineNo);
				const cells = result.data;
				if (cells.every((c) => c.trim() === '')) return;
				if (!cols) {
					cols = width(cells);
					firstLine = lineNo;
					if (cols < 2)
						throw new SpectrumFileError('csv-shape', file, 'the first line has a single column; expected x,y columns or one spectrum per row separated by commas, semicolons or tabs', lineNo);
					header = cells.slice(0, cols).map((c) => c.trim());
					if (cols === 2 && layout === 'auto') {
						xy = new XyCollector(file, decimalComma, cellOf(header[0], decimalComma).kind !== 'number');
						if (!xy.hasHeader) xy.add(cells, lineNo);
					} else rows.push({ cells, line: lineNo });
					return;
				}
				const w = width(cells);
				if (w > cols || cells.length < cols) throw new SpectrumFileError('csv-shape', file, `the line has ${w} columns but the first line has ${cols}`, lineNo);
				if (xy) xy.add(cells, lineNo);
				else rows.push({ cells, line: lineNo });
			} catch (e) {
				failure = e;
				parser.abort();
			}
		}
	});
	if (failure) throw failure;
	if (!cols) throw new SpectrumFileError('empty', file, 'the file contains no rows');
	const o = { allowGaps, minPoints, unit: options.unit };
	return xy ? (xy as XyCollector).finish(header, firstLine, o) : matrixFile(rows, header, file, decimalComma, o);
}

/** The points of an x,y file, collected row by row into growing typed arrays (with each point's line number). */
class XyCollector {
	axis = new Float64Array(1024);
	values = new Float64Array(1024);
	lines = new Int32Array(1024);
	n = 0;
	constructor(
		readonly file: string,
		readonly decimalComma: boolean,
		readonly hasHeader: boolean
	) {}

	add(cells: string[], line: number) {
		const { file, decimalComma } = this;
		const x = cellOf(cells[0], decimalComma);
		if (x.kind === 'text') throw new SpectrumFileError('bad-number', file, `the x value "${cells[0].trim().slice(0, 30)}" is not a number`, line);
		if (x.kind === 'gap') throw new SpectrumFileError('non-finite', file, `the x value "${cells[0].trim()}" is missing; every point needs its wavelength or wavenumber`, line);
		const y = cellOf(cells[1], decimalComma);
		if (y.kind === 'text') throw new SpectrumFileError('bad-number', file, `the y value "${cells[1].trim().slice(0, 30)}" is not a number`, line);
		if (this.n === this.axis.length) {
			const grow = <T extends Float64Array | Int32Array>(a: T): T => {
				const b = new (a.constructor as new (n: number) => T)(a.length * 2);
				b.set(a);
				return b;
			};
			this.axis = grow(this.axis);
			this.values = grow(this.values);
			this.lines = grow(this.lines);
		}
		this.axis[this.n] = x.value;
		this.values[this.n] = y.kind === 'number' ? y.value : Number.NaN;
		this.lines[this.n] = line;
		this.n++;
	}

	finish(header: string[], headerLine: number, o: Opts): ParsedFile {
		const { file, hasHeader, n } = this;
		const axis = this.axis.slice(0, n);
		const values = this.values.slice(0, n);
		const lines = this.lines;
		const lineOf = (i: number) => (i < n ? lines[i] : undefined);
		const missing = checkSpectrum(axis, values, { file, allowGaps: o.allowGaps, minPoints: o.minPoints, lineOf });
		const unit = (hasHeader ? unitHint(header[0]) : null) ?? o.unit ?? unitByRange(axis, file, hasHeader ? headerLine : undefined);
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
			line: n ? lines[0] : undefined
		};
		return { format: 'csv-xy', fileName: file, spectra: [spectrum] };
	}
}

type Opts = { allowGaps: boolean; minPoints: number; unit?: AxisUnit };

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
			if (v.kind === 'text') throw new SpectrumFileError('bad-number', file, `column ${c + 1} ("${header[c]}") holds "${(r.cells[c] ?? '').trim().slice(0, 30)}", which is not a number`, r.line);
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
