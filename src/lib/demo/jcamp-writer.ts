// JCAMP-DX writers for the demo files: (X++(Y..Y)) in AFFN, or compressed in DIF/DUP form
// (McDonald & Wilks 1988, §5: SQZ, DIF and DUP characters; every line after a DIF line starts
// with the previous line's last Y as a check value).

export interface JcampSpectrum {
	title: string;
	axis: ArrayLike<number>;
	/** Ordinates already on the YFACTOR grid (value / yFactor is a whole number). */
	values: ArrayLike<number>;
	xUnits: 'NANOMETERS' | '1/CM' | 'MICROMETERS';
	yUnits: string;
	yFactor: number;
	dataType: string;
	origin: string;
	owner: string;
	/** "YYYY/MM/DD HH:MM:SS" */
	longDate?: string;
	/** Vendor labels, written as ##$KEY=value. */
	vendor?: Record<string, string>;
}

const MAX_LINE = 80;

const fmtX = (x: number) => String(+x.toFixed(6));

function header(s: JcampSpectrum, ints: number[]): string[] {
	const n = s.axis.length;
	const lines = [
		`##TITLE=${s.title}`,
		'##JCAMP-DX=5.01',
		`##DATA TYPE=${s.dataType}`,
		`##ORIGIN=${s.origin}`,
		`##OWNER=${s.owner}`
	];
	if (s.longDate) lines.push(`##LONGDATE=${s.longDate}`);
	for (const [k, v] of Object.entries(s.vendor ?? {})) lines.push(`##$${k}=${v}`);
	lines.push(
		`##XUNITS=${s.xUnits}`,
		`##YUNITS=${s.yUnits}`,
		'##XFACTOR=1',
		`##YFACTOR=${s.yFactor}`,
		`##FIRSTX=${fmtX(s.axis[0])}`,
		`##LASTX=${fmtX(s.axis[n - 1])}`,
		`##NPOINTS=${n}`,
		`##FIRSTY=${+(ints[0] * s.yFactor).toPrecision(12)}`,
		`##MAXY=${+(Math.max(...ints) * s.yFactor).toPrecision(12)}`,
		`##MINY=${+(Math.min(...ints) * s.yFactor).toPrecision(12)}`,
		'##XYDATA=(X++(Y..Y))'
	);
	return lines;
}

function toInts(s: JcampSpectrum): number[] {
	return Array.from(s.values, (v) => Math.round(v / s.yFactor));
}

/** Plain numbers separated by blanks, as many per line as fit in 80 characters. */
export function writeJcampAffn(s: JcampSpectrum): string {
	const ints = toInts(s);
	const out = header(s, ints);
	let i = 0;
	while (i < ints.length) {
		let line = fmtX(s.axis[i]);
		while (i < ints.length && line.length + 1 + String(ints[i]).length <= MAX_LINE) line += ` ${ints[i++]}`;
		out.push(line);
	}
	out.push('##END=');
	return `${out.join('\n')}\n`;
}

function letter(v: number, pos: string, neg: string): string {
	const s = String(Math.abs(v));
	return (v < 0 ? neg : pos)[Number(s[0])] + s.slice(1);
}

/** SQZ: the sign and first digit in one letter (@=0, A–I=+1…9, a–i=−1…9). */
export const sqz = (v: number) => letter(v, '@ABCDEFGHI', '@abcdefghi');
/** DIF: a difference from the previous value (%=0, J–R=+1…9, j–r=−1…9). */
export const dif = (v: number) => letter(v, '%JKLMNOPQR', '%jklmnopqr');
/** DUP: a repeat count including the first occurrence (S–Z=1…8, s=9 as the leading digit). */
export const dup = (n: number) => {
	const s = String(n);
	return 'STUVWXYZs'[Number(s[0]) - 1] + s.slice(1);
};

/** DIF/DUP form: each line is X, an SQZ value, then differences, with runs of equal differences as DUP. */
export function writeJcampDifDup(s: JcampSpectrum): string {
	const ints = toInts(s);
	const out = header(s, ints);
	let start = 0; // index of the line's first (absolute) value
	for (;;) {
		let line = fmtX(s.axis[start]) + sqz(ints[start]);
		let j = start + 1;
		while (j < ints.length) {
			const d = ints[j] - ints[j - 1];
			let run = 1;
			while (j + run < ints.length && ints[j + run] - ints[j + run - 1] === d) run++;
			const token = dif(d) + (run > 1 ? dup(run) : '');
			if (line.length + token.length > MAX_LINE && j > start + 1) break;
			line += token;
			j += run;
		}
		out.push(line);
		if (j >= ints.length) break;
		start = j - 1; // the next line repeats this line's last value as its check
	}
	// A closing line with the last value alone lets a reader verify the final difference too.
	if (ints.length > 1) out.push(fmtX(s.axis[ints.length - 1]) + sqz(ints[ints.length - 1]));
	out.push('##END=');
	return `${out.join('\n')}\n`;
}
