// Spectrum files for intake tests and the intake bench: valid JCAMP-DX/CSV with unique bytes, and typical bad files.
import { randomBytes } from 'node:crypto';
import { writeJcampAffn } from '../../src/lib/demo';

const encoder = new TextEncoder();

/** A smooth NIR-like spectrum on 1100..(1100 + 2·(n−1)) nm; `tag` goes into the title so every file's bytes differ. */
export function jcampFile(points = 700, tag = randomBytes(4).toString('hex')): Uint8Array {
	const axis = Array.from({ length: points }, (_, i) => 1100 + 2 * i);
	const values = axis.map((x, i) => +(0.3 + 0.2 * Math.exp(-(((x - 1450) / 40) ** 2)) + 0.15 * Math.exp(-(((x - 1940) / 60) ** 2)) + 1e-4 * (i % 7)).toFixed(6));
	return encoder.encode(
		writeJcampAffn({
			title: `intake test ${tag}`,
			axis,
			values,
			xUnits: 'NANOMETERS',
			yUnits: 'ABSORBANCE',
			yFactor: 0.000001,
			dataType: 'INFRARED SPECTRUM',
			origin: 'Lotgate tests',
			owner: 'Lotgate tests; invented data',
			longDate: '2025/03/04 08:30:58'
		})
	);
}

/** The same file without its ##END= label: the parser must refuse it as truncated. */
export function truncatedJcamp(points = 700): Uint8Array {
	const text = new TextDecoder().decode(jcampFile(points));
	return encoder.encode(text.slice(0, Math.floor(text.length * 0.6)));
}

/** A two-column x,y CSV with a unit in the header. */
export function csvXy(points = 120, tag = randomBytes(4).toString('hex')): Uint8Array {
	const lines = [`wavelength_nm,absorbance_${tag}`];
	for (let i = 0; i < points; i++) lines.push(`${1200 + 4 * i},${(0.4 + 0.001 * i).toFixed(5)}`);
	return encoder.encode(lines.join('\n') + '\n');
}

/** A large AFFN file of about `megabytes` MB, written without spreading huge arrays (for the memory check). */
export function largeJcamp(megabytes: number): Uint8Array {
	const perLine = 10;
	const lineText = (x: number) => {
		let s = String(x);
		for (let k = 0; k < perLine; k++) s += ` ${300000 + ((x * 7 + k * 13) % 5000)}`;
		return s;
	};
	const start = 4_000_000;
	const approxLine = lineText(start).length + 1;
	const lines = Math.ceil((megabytes * 1024 * 1024) / approxLine);
	const n = lines * perLine;
	const body: string[] = [];
	for (let l = 0; l < lines; l++) body.push(lineText(start + l * perLine));
	const header = [
		'##TITLE=large intake test',
		'##JCAMP-DX=5.01',
		'##DATA TYPE=INFRARED SPECTRUM',
		'##XUNITS=1/CM',
		'##YUNITS=ABSORBANCE',
		'##XFACTOR=0.001',
		'##YFACTOR=0.000001',
		`##FIRSTX=${(start * 0.001).toFixed(3)}`,
		`##LASTX=${((start + n - 1) * 0.001).toFixed(3)}`,
		`##NPOINTS=${n}`,
		`##FIRSTY=${((300000 + ((start * 7) % 5000)) * 0.000001).toFixed(6)}`,
		'##XYDATA=(X++(Y..Y))'
	];
	return encoder.encode([...header, ...body, '##END=', ''].join('\n'));
}
