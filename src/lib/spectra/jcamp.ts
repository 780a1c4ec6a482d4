// JCAMP-DX 4.24 / 5.x single-spectrum files, decoded once, by our own strict reader: structure, required labels,
// units, NPOINTS, the X at the start of each line and the DIF check value are all checked (a general-purpose
// converter checks none of them). Rules: McDonald & Wilks 1988 (Appl. Spectrosc. 42:151–162), docs/methods.md §14.
// jcampconverter is kept as a test oracle only (tests/unit/spectra/jcamp-oracle.test.ts): values and metadata agree.
import { decodeXYData } from './asdf';
import { SpectrumFileError } from './errors';
import type { AxisUnit, ParsedFile, ParsedSpectrum, Technique } from './types';
import { checkSpectrum } from './validate';

interface Ldr {
	/** Canonical label: upper case without blanks, "-", "/", "_" (the standard's comparison rule). */
	key: string;
	raw: string;
	/** The label exactly as written between "##" and "=". */
	label: string;
	value: string;
	/** Everything after "=", continuation lines included (line ends as in the file), comments kept, trimmed. */
	text: string;
	line: number;
	/** Text lines after the label line, up to the next label (the data of a table). */
	body: { text: string; line: number }[];
}

const canon = (label: string) => label.replace(/[\s\-/_]/g, '').toUpperCase();

function scanLabels(text: string): { ldrs: Ldr[]; lineCount: number } {
	const lines = text.split(/\r\n|\r|\n/);
	const eol = text.includes('\r\n') ? '\r\n' : '\n';
	const ldrs: Ldr[] = [];
	let cur: Ldr | null = null;
	const rest: string[] = [];
	const close = () => {
		if (cur) cur.text = [cur.text, ...rest].join(eol).trim();
		rest.length = 0;
	};
	for (let i = 0; i < lines.length; i++) {
		const s = lines[i];
		if (s.startsWith('##')) {
			close();
			const eq = s.indexOf('=');
			const label = eq < 0 ? s.slice(2) : s.slice(2, eq);
			const after = eq < 0 ? '' : s.slice(eq + 1);
			cur = { key: canon(label), raw: label.trim(), label, value: stripComment(after).trim(), text: after, line: i + 1, body: [] };
			ldrs.push(cur);
		} else if (cur) {
			cur.body.push({ text: s, line: i + 1 });
			rest.push(s);
		}
	}
	close();
	// A final line break does not start another line.
	return { ldrs, lineCount: lines.length > 1 && lines.at(-1) === '' ? lines.length - 1 : lines.length };
}

/**
 * The private labels (##$NAME=) of the block as metadata, NAME → value with comments removed; a label given twice
 * joins its values with "; ". A value written as a list "{a b c}" or as "(1..3)" with values on the next lines
 * also gives NAME1…: the same reading as jcampconverter's, which tests hold it to.
 */
function privateLabels(ldrs: Ldr[]): Record<string, string> {
	const grouped = new Map<string, string[]>();
	for (const l of ldrs) {
		if (!l.label.startsWith('$')) continue;
		const name = l.label.slice(1);
		grouped.set(name, [...(grouped.get(name) ?? []), l.text]);
	}
	const meta: Record<string, string> = {};
	const put = (name: string, value: string | undefined) => {
		if (value !== undefined) meta[name.trim()] = stripComment(value).trim();
	};
	for (const [name, values] of grouped) put(name, values.join('; '));
	for (const [name, values] of grouped) {
		if (values.length !== 1) continue;
		const v = values[0];
		if (v.startsWith('{')) {
			if (!v.includes(':') && v.endsWith('}')) v.slice(1, -1).split(/[,; ]+/).filter(Boolean).forEach((item, k) => put(name + String(k), item));
		} else if (v.startsWith('(')) {
			const rows = v.split(/\r?\n/);
			const range = /^\((\d+)\.\.(\d+)\).*$/.exec(rows[0]);
			if (range) {
				const items = rows.slice(1).join(' ').split(/[,; ]+/).filter(Boolean);
				for (let u = Number(range[1]); u <= Number(range[2]); u++) put(name + String(u), items[u - Number(range[1])]);
			}
		}
	}
	return meta;
}

function stripComment(s: string): string {
	const i = s.indexOf('$$');
	return i < 0 ? s : s.slice(0, i);
}

const UNITS: Record<string, AxisUnit> = { NANOMETERS: 'nm', '1CM': 'cm-1', MICROMETERS: 'um' };

/** Wavenumber (cm⁻¹) of an axis value, to tell near- from mid-infrared. */
function toWavenumber(x: number, unit: AxisUnit): number {
	return unit === 'cm-1' ? x : unit === 'nm' ? 1e7 / x : 1e4 / x;
}

/** RAMAN → Raman; (NEAR) INFRARED → NIR, or mid-IR when most of the axis lies below 4000 cm⁻¹. */
function techniqueOf(dataType: string | undefined, first: number, last: number, unit: AxisUnit): Technique | null {
	const t = (dataType ?? '').toUpperCase();
	if (t.includes('RAMAN')) return 'Raman';
	if (!t.includes('INFRARED')) return null;
	const mid = (toWavenumber(first, unit) + toWavenumber(last, unit)) / 2;
	return mid < 4000 ? 'mid-IR' : 'NIR';
}

const pad = (n: string) => n.padStart(2, '0');

/** ##LONGDATE= (YYYY/MM/DD[ HH:MM:SS[.s][ ±UUUU]]) or the older ##DATE= (YY/MM/DD) with ##TIME=. */
export function acquisitionTime(longDate: string | undefined, date: string | undefined, time: string | undefined): string | null {
	const clock = (t: string | undefined): string | null => {
		const m = /^(\d{1,2}):(\d{2})(?::(\d{2})(\.\d+)?)?$/.exec((t ?? '').trim());
		return m ? `${pad(m[1])}:${m[2]}:${m[3] ?? '00'}${m[4] ?? ''}` : null;
	};
	const valid = (y: number, mo: number, d: number) => mo >= 1 && mo <= 12 && d >= 1 && d <= 31 && y >= 1900;
	if (longDate) {
		const m = /^(\d{4})[/-](\d{1,2})[/-](\d{1,2})(?:[ T]+(\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?))?\s*(Z|[+-]\d{2}:?\d{2})?\s*$/.exec(longDate.trim());
		if (m && valid(+m[1], +m[2], +m[3])) {
			const zone = m[5] === undefined ? '' : m[5] === 'Z' ? 'Z' : `${m[5].slice(0, 3)}:${m[5].slice(-2)}`;
			const c = m[4] ? clock(m[4]) : null;
			return `${m[1]}-${pad(m[2])}-${pad(m[3])}${c ? `T${c}${zone}` : ''}`;
		}
	}
	if (date) {
		const m = /^(\d{2}|\d{4})[/-](\d{1,2})[/-](\d{1,2})$/.exec(date.trim());
		if (m) {
			const y = m[1].length === 4 ? +m[1] : +m[1] + (+m[1] >= 70 ? 1900 : 2000);
			if (valid(y, +m[2], +m[3])) {
				const c = clock(time);
				return `${y}-${pad(m[2])}-${pad(m[3])}${c ? `T${c}` : ''}`;
			}
		}
	}
	return null;
}

function labelNumber(l: Ldr, file: string): number {
	const v = l.value.trim();
	const n = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(v) ? Number(v) : Number.NaN;
	if (!Number.isFinite(n)) throw new SpectrumFileError('bad-number', file, `##${l.raw}= should be a number, found "${v.slice(0, 40)}"`, l.line);
	return n;
}

/** `text` as returned by readText (already refused when empty or binary). */
export function parseJcamp(text: string, file: string, options: { allowGaps?: boolean; minPoints?: number } = {}): ParsedFile {
	const { allowGaps = false, minPoints = 50 } = options;
	const { ldrs, lineCount } = scanLabels(text);
	if (ldrs.length === 0) throw new SpectrumFileError('unknown-format', file, 'no JCAMP-DX labels (lines starting with "##") were found');
	const first = (key: string) => ldrs.find((l) => l.key === key);
	const all = (key: string) => ldrs.filter((l) => l.key === key);

	// Structure first: what kind of file is this at all?
	if (ldrs[0].key !== 'TITLE') throw new SpectrumFileError('missing-label', file, `a JCAMP-DX file must start with ##TITLE=, found ##${ldrs[0].raw}=`, ldrs[0].line);
	const dataType = first('DATATYPE');
	const link = first('LINK') ?? (dataType && /^LINK\b/i.test(dataType.value) ? dataType : undefined);
	if (link) throw new SpectrumFileError('link-block', file, 'this is a link block (it points to other blocks instead of holding a spectrum); upload the spectrum file itself', link.line);
	const blocks = first('BLOCKS');
	if (blocks) throw new SpectrumFileError('multi-block', file, `the file holds several blocks (##BLOCKS=${blocks.value}); upload one spectrum per file`, blocks.line);
	const titles = all('TITLE');
	if (titles.length > 1) throw new SpectrumFileError('multi-block', file, `a second block starts here (##TITLE=${titles[1].value.slice(0, 40)}); upload one spectrum per file`, titles[1].line);
	const ntuples = first('NTUPLES');
	if (ntuples) throw new SpectrumFileError('unsupported-table', file, `the file holds an ##NTUPLES= table (several pages of data); only a single ##XYDATA= spectrum is accepted`, ntuples.line);
	const end = first('END');
	if (!end) throw new SpectrumFileError('truncated', file, 'the file ends without ##END=; it is incomplete (interrupted export or upload?)', lineCount);
	const version = ldrs[1]?.key === 'JCAMPDX' ? ldrs[1] : undefined;
	if (!version) {
		const v = first('JCAMPDX');
		throw new SpectrumFileError('missing-label', file, v ? '##JCAMP-DX= must come right after ##TITLE=' : 'the ##JCAMP-DX= label (the version) is missing', v?.line ?? ldrs[1]?.line);
	}
	if (!/^(4\.24|5(\.\d+)?)\b/.test(version.value))
		throw new SpectrumFileError('unsupported-version', file, `JCAMP-DX version "${version.value.slice(0, 20)}" is not supported; 4.24 and 5.x are`, version.line);
	const before = (l: Ldr) => l.line < end.line;
	const xy = all('XYDATA').filter(before);
	const peaks = [...all('PEAKTABLE'), ...all('XYPOINTS')].filter(before);
	if (xy.length === 0 && peaks.length > 0)
		throw new SpectrumFileError('peak-table', file, `the file holds a ##${peaks[0].raw}= (a list of peaks or points) instead of a full spectrum in ##XYDATA=; export the full spectrum`, peaks[0].line);
	if (xy.length === 0) throw new SpectrumFileError('missing-label', file, 'there is no ##XYDATA= table, so the file holds no spectrum', end.line);
	if (xy.length > 1) throw new SpectrumFileError('multi-block', file, 'the file holds more than one ##XYDATA= table; upload one spectrum per file', xy[1].line);
	const table = xy[0];
	const form = table.value.replace(/\s/g, '').toUpperCase();
	if (form !== '(X++(Y..Y))')
		throw new SpectrumFileError('unsupported-table', file, `##XYDATA=${table.value.slice(0, 20)} is not supported; only the (X++(Y..Y)) form is`, table.line);

	// Labels that place and scale the data (McDonald & Wilks 1988, required for XYDATA).
	const need = (key: string, name: string): Ldr => {
		const l = ldrs.find((x) => x.key === key && before(x));
		if (!l) throw new SpectrumFileError('missing-label', file, `the required label ##${name}= is missing`, table.line);
		return l;
	};
	const xunits = need('XUNITS', 'XUNITS');
	const unit = UNITS[canon(xunits.value)];
	if (!unit) throw new SpectrumFileError('unknown-unit', file, `the axis unit "##XUNITS=${xunits.value.slice(0, 30)}" is not recognised; NANOMETERS, 1/CM or MICROMETERS are accepted`, xunits.line);
	const xFactor = labelNumber(need('XFACTOR', 'XFACTOR'), file);
	const yFactor = labelNumber(need('YFACTOR', 'YFACTOR'), file);
	const firstXL = need('FIRSTX', 'FIRSTX');
	const lastXL = need('LASTX', 'LASTX');
	const npL = need('NPOINTS', 'NPOINTS');
	const firstX = labelNumber(firstXL, file);
	const lastX = labelNumber(lastXL, file);
	const npoints = labelNumber(npL, file);
	if (xFactor === 0 || yFactor === 0) throw new SpectrumFileError('bad-number', file, `##${xFactor === 0 ? 'XFACTOR' : 'YFACTOR'}= must not be 0`, (xFactor === 0 ? need('XFACTOR', '') : need('YFACTOR', '')).line);
	if (!Number.isInteger(npoints) || npoints < 1) throw new SpectrumFileError('bad-number', file, `##NPOINTS= must be a whole number of points, found ${npL.value}`, npL.line);
	if (npoints < Math.max(2, minPoints))
		throw new SpectrumFileError('too-few-points', file, `the spectrum has ${npoints} point${npoints === 1 ? '' : 's'}; at least ${Math.max(2, minPoints)} are needed`, npL.line);
	const firstYL = ldrs.find((x) => x.key === 'FIRSTY' && before(x));
	const firstY = firstYL ? labelNumber(firstYL, file) : undefined;

	// The one decoding of the table, checked as it goes (check values, repeat counts) and against the labels below.
	const body = table.body.filter((b) => b.line < end.line);
	const dec = decodeXYData(body, file, npoints);
	if (dec.y.length !== npoints) {
		const at = dec.lines.at(-1)?.line ?? table.line;
		throw new SpectrumFileError('npoints-mismatch', file, `##NPOINTS= announces ${npoints} points but the data table holds ${dec.y.length} (last data line ${at})`, npL.line);
	}
	const dx = (lastX - firstX) / (npoints - 1);
	const tol = Math.max(0.5 * Math.abs(dx), 0.5 * Math.abs(xFactor));
	dec.lines.forEach((l, k) => {
		const expected = firstX + l.index * dx;
		const got = l.x * xFactor;
		if (Math.abs(got - expected) <= tol) return;
		if (k === 0) throw new SpectrumFileError('firstx-mismatch', file, `the first data line starts at X = ${got} but ##FIRSTX= says ${firstX}`, l.line);
		if (k === dec.lines.length - 1)
			throw new SpectrumFileError('lastx-mismatch', file, `the last data line starts at X = ${got}, so the spectrum does not end at ##LASTX=${lastX} as announced (expected this line to start at ${+expected.toPrecision(10)})`, l.line);
		throw new SpectrumFileError('x-check', file, `the line starts at X = ${got} but point ${l.index + 1} should lie at ${+expected.toPrecision(10)}; points are missing or extra on an earlier line`, l.line);
	});
	if (firstY !== undefined && Number.isFinite(dec.y[0]) && Math.abs(dec.y[0] * yFactor - firstY) > Math.abs(yFactor) + 1e-6 * Math.abs(firstY))
		throw new SpectrumFileError('firsty-mismatch', file, `the first Y value is ${dec.y[0] * yFactor} but ##FIRSTY= says ${firstY}`, firstYL!.line);

	const values = new Float64Array(npoints);
	for (let i = 0; i < npoints; i++) values[i] = dec.y[i] * yFactor; // "?" stays NaN: a gap

	// The axis from FIRSTX and the step, without accumulating rounding along 2,000 points.
	const axis = new Float64Array(npoints);
	for (let i = 0; i < npoints; i++) axis[i] = i === npoints - 1 ? lastX : firstX + i * dx;
	const missing = checkSpectrum(axis, values, { file, allowGaps, minPoints, lineOf: (i) => dec.lineOf[i] });
	const block = ldrs.filter(before);
	const meta = privateLabels(block);
	// A standard label's text as written (comments included), repeated ones joined with "; ".
	const info = (key: string) => {
		const found = block.filter((l) => !l.label.startsWith('$') && l.label.replace(/[_ -]/g, '').toUpperCase() === key);
		return found.length ? found.map((l) => l.text).join('; ') : undefined;
	};
	const title = stripComment(first('TITLE')!.value).trim();
	const yUnit = ldrs.find((x) => x.key === 'YUNITS' && before(x))?.value || null;
	const spectrum: ParsedSpectrum = {
		id: null,
		axis,
		values,
		unit,
		yUnit,
		title: title === '' ? null : title,
		meta,
		acquiredAt: acquisitionTime(info('LONGDATE'), info('DATE'), info('TIME')),
		technique: techniqueOf(dataType?.value, firstX, lastX, unit),
		missing,
		line: table.line
	};
	return { format: 'jcamp', fileName: file, spectra: [spectrum], jcampVersion: version.value, encodings: [...dec.encodings] };
}
