// Spectrum file parsers: pure functions from bytes to typed spectra, or a SpectrumFileError.
import { readText } from './bytes';
import { parseCsv } from './csv';
import { detectText } from './detect';
import { SpectrumFileError } from './errors';
import { parseJcamp } from './jcamp';
import type { ParsedFile, ParseOptions } from './types';

export type { AxisUnit, ParsedFile, ParsedSpectrum, ParseOptions, SpectrumFormat, Technique } from './types';
export type { SpectrumErrorCode } from './errors';
export { isSpectrumErrorCode, SPECTRUM_ERROR_CODES, SpectrumFileError } from './errors';
export { detectFormat } from './detect';
export { unitHint } from './csv';

/**
 * Parses one uploaded file. JCAMP-DX or CSV is told from the content, not the name.
 * Throws SpectrumFileError (and nothing else) when the file is refused.
 */
export function parseSpectrumFile(bytes: Uint8Array, fileName: string, options: ParseOptions = {}): ParsedFile {
	const text = readText(bytes, fileName); // refuses empty and binary files with their own reasons first
	const format = detectText(text);
	if (format === 'jcamp') return parseJcamp(text, fileName, options);
	if (format === 'csv') return parseCsv(text, fileName, options);
	throw new SpectrumFileError(
		'unknown-format',
		fileName,
		'the file is neither JCAMP-DX (first line "##TITLE=") nor a CSV/TSV table of numbers; export the spectrum as .jdx or .csv'
	);
}
