// fontkit (the font engine pdfkit embeds fonts with) ships no types; only what the reports use is declared.
declare module 'fontkit' {
	export interface Font {
		/** Every Unicode code point the font maps to a glyph. */
		characterSet: number[];
		hasGlyphForCodePoint(codePoint: number): boolean;
	}
	export function create(buffer: Buffer | Uint8Array): Font;
}
