// Format detection by content: the extension is not trusted, instruments name exports freely.
import { bytesToText, looksBinary } from './bytes';

const SNIFF_BYTES = 65536;

/** 'jcamp' when the first non-blank line is a ##LABEL=, 'csv' when it is delimited text, else null. */
export function detectFormat(bytes: Uint8Array, fileName: string): 'jcamp' | 'csv' | null {
	void fileName;
	if (bytes.length === 0 || looksBinary(bytes)) return null;
	return detectText(bytesToText(bytes, SNIFF_BYTES));
}

/** The same decision on already decoded text (only its start is looked at). */
export function detectText(full: string): 'jcamp' | 'csv' | null {
	const text = full.length > SNIFF_BYTES ? full.slice(0, SNIFF_BYTES) : full;
	const lines = text.split(/\r\n|\r|\n/);
	const first = lines.find((l) => l.trim() !== '' && !l.trim().startsWith('$$'));
	if (first === undefined) return null;
	const head = first.trim();
	if (/^##\s*[^=]*=/.test(head)) return 'jcamp';
	if (head.startsWith('#')) return null;
	// A delimiter and at least one number-like cell in the first rows: an x,y file or a matrix.
	const sample = lines.filter((l) => l.trim() !== '').slice(0, 5);
	const delimited = sample.some((l) => /[,;\t|]/.test(l));
	const numeric = sample.some((l) => /(^|[,;\t|])\s*[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?\s*([,;\t|]|$)/.test(l));
	return delimited && numeric ? 'csv' : null;
}
