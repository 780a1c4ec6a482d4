// Bytes to text, refusing empty and binary files before any parser sees them.
import { SpectrumFileError } from './errors';

const SNIFF = 8192;

/** True when the bytes look like a binary file (NUL bytes, or many control characters). */
export function looksBinary(bytes: Uint8Array): boolean {
	if (hasUtf16Bom(bytes)) return false;
	const n = Math.min(bytes.length, SNIFF);
	let control = 0;
	for (let i = 0; i < n; i++) {
		const b = bytes[i];
		if (b === 0) return true;
		// Tab, LF, VT, FF and CR are text; other C0 controls and DEL are not.
		if ((b < 9 || (b > 13 && b < 32) || b === 127) && b !== 26) control++;
	}
	return n > 0 && control / n > 0.05;
}

function hasUtf16Bom(bytes: Uint8Array): boolean {
	return bytes.length >= 2 && ((bytes[0] === 0xff && bytes[1] === 0xfe) || (bytes[0] === 0xfe && bytes[1] === 0xff));
}

/** UTF-8 when valid, else Latin-1 (older instrument software); UTF-16 when it has a byte-order mark. */
export function bytesToText(bytes: Uint8Array, limit = Infinity): string {
	const view = bytes.length > limit ? bytes.subarray(0, limit) : bytes;
	let text: string;
	if (hasUtf16Bom(view)) text = new TextDecoder(view[0] === 0xff ? 'utf-16le' : 'utf-16be').decode(view);
	else {
		try {
			text = new TextDecoder('utf-8', { fatal: limit === Infinity }).decode(view);
		} catch {
			text = new TextDecoder('latin1').decode(view);
		}
	}
	return text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
}

/** The file's text, or a typed refusal when it is empty or binary. */
export function readText(bytes: Uint8Array, file: string): string {
	if (bytes.length === 0) throw new SpectrumFileError('empty', file, 'the file is empty (0 bytes)');
	if (looksBinary(bytes)) throw new SpectrumFileError('binary', file, 'this is a binary file, not a text export; export the spectrum as JCAMP-DX (.jdx) or CSV');
	const text = bytesToText(bytes);
	if (text.trim() === '') throw new SpectrumFileError('empty', file, 'the file contains only blank lines');
	return text;
}
