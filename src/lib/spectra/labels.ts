// What a spectrum file's own header says about where it belongs: lot numbers and container numbers written by the
// instrument or the operator (JCAMP-DX labelled data records such as ##TITLE, ##COMMENT, ##SAMPLE DESCRIPTION,
// vendor ##$LOT/##$CONTAINER, $$ comments; a CSV's leading # comment lines). Pure: bytes in, labels out.

export interface HeaderLabels {
	/** Lot numbers named in the header, as written (a lot number holds at least one digit). */
	lots: string[];
	/** Container numbers named in the header. */
	containers: number[];
	/** The header lines the labels came from, for the warning shown to the person uploading. */
	lines: string[];
}

const HEADER_BYTES = 16_384;
// Data starts here: nothing after it is header text.
const DATA_START = /^##\s*(XYDATA|XYPOINTS|PEAK\s*TABLE|PEAKTABLE|DATA\s*TABLE|NTUPLES)\s*=/i;
const LOT_WORD = /\blot\b(?:\s*(?:no\.?|number|#))?\s*[:=#]?\s*([A-Za-z0-9][A-Za-z0-9._/-]*[A-Za-z0-9])/gi;
const CONTAINER_WORD = /\b(?:container|drum|bag|keg)\b(?:\s*(?:no\.?|number|#))?\s*[:=#]?\s*C?0*(\d{1,5})\b/gi;
const LOT_KEY = /^##\$?\s*(?:SUPPLIER\s*)?LOT(?:\s*(?:NO|NUMBER|ID))?\s*=\s*(.+)$/i;
const CONTAINER_KEY = /^##\$?\s*CONTAINER(?:\s*(?:NO|NUMBER|ID))?\s*=\s*C?0*(\d{1,5})\s*$/i;

/** The header text lines of a JCAMP-DX or CSV file (latin1 is enough: the labels sought are ASCII). */
export function headerLines(bytes: Uint8Array): string[] {
	const text = new TextDecoder('latin1').decode(bytes.subarray(0, HEADER_BYTES));
	const out: string[] = [];
	for (const raw of text.split(/\r\n|\r|\n/).slice(0, 400)) {
		const line = raw.trim();
		if (!line) continue;
		if (DATA_START.test(line)) break;
		if (line.startsWith('##') || line.startsWith('$$') || line.startsWith('#')) out.push(line);
		else if (/^[\d\s.,;:+\-eE\t]+$/.test(line)) break; // a row of numbers: the header is over
	}
	return out;
}

export function headerLabels(bytes: Uint8Array): HeaderLabels {
	const lots = new Set<string>();
	const containers = new Set<number>();
	const lines: string[] = [];
	for (const line of headerLines(bytes)) {
		let hit = false;
		const key = LOT_KEY.exec(line);
		if (key && /\d/.test(key[1])) {
			lots.add(key[1].trim().replace(/[.,;]+$/, ''));
			hit = true;
		}
		const ckey = CONTAINER_KEY.exec(line);
		if (ckey) {
			containers.add(Number(ckey[1]));
			hit = true;
		}
		if (!key && !ckey) {
			for (const m of line.matchAll(LOT_WORD)) {
				if (!/\d/.test(m[1])) continue;
				lots.add(m[1].replace(/[.,;]+$/, ''));
				hit = true;
			}
			for (const m of line.matchAll(CONTAINER_WORD)) {
				containers.add(Number(m[1]));
				hit = true;
			}
		}
		if (hit) lines.push(line.length > 200 ? `${line.slice(0, 200)}…` : line);
	}
	return { lots: [...lots], containers: [...containers], lines };
}

export interface UploadTarget {
	/** The lot numbers that name the lot being uploaded to: ours (internal) and the supplier's. */
	lotNumbers: string[];
	container: number;
}

const norm = (s: string) => s.trim().toUpperCase();

/** Where the header disagrees with the upload target, in words; empty when it agrees or names nothing. */
export function headerMismatches(labels: HeaderLabels, target: UploadTarget): string[] {
	const ours = new Set(target.lotNumbers.map(norm));
	const out: string[] = [];
	const otherLots = labels.lots.filter((l) => !ours.has(norm(l)));
	// A header naming our lot as well as another (e.g. "lot QL-…, supplier lot …") agrees as long as one is ours.
	if (otherLots.length && !labels.lots.some((l) => ours.has(norm(l)))) {
		out.push(`the file names lot ${otherLots.join(', ')}, not ${target.lotNumbers.join(' / ')}`);
	}
	if (labels.containers.length && !labels.containers.includes(target.container)) {
		out.push(`the file names container ${labels.containers.map((c) => `C${String(c).padStart(2, '0')}`).join(', ')}, not C${String(target.container).padStart(2, '0')}`);
	}
	return out;
}
