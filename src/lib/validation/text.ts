// One boundary rule for every piece of free text that enters Lotgate (forms, JSON API, uploaded file names).
// PostgreSQL cannot store NUL and silently replaces unpaired surrogates, so such text would be stored differently
// from what was checked and hashed; bidi controls can make a name or lot number display as something else.
import { z } from 'zod';
// Every schema that takes text goes through this module, so loading it installs the product's own validation messages.
import './messages';

/**
 * - `name`: one line that identifies something (names, codes, lot numbers, labels, serials): no control characters at
 *   all, no bidi override, embedding or isolate characters.
 * - `line`: one line of prose (a meaning, a short reason): no control characters, no bidi overrides.
 * - `multiline`: prose from a text area (reasons, notes): newline and tab allowed, CR LF and CR become LF.
 */
export type TextKind = 'name' | 'line' | 'multiline';

/** U+202A–U+202E (embeddings and overrides) and U+2066–U+2069 (isolates): they reorder what is displayed. */
const BIDI_CONTROL = /[\u202A-\u202E\u2066-\u2069]/;
// C0 (except tab, LF, CR, handled per kind), DEL and C1 controls.
const CONTROL = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F-\u009F]/;
const LONE_SURROGATE = /[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/;

function codePoint(ch: string) {
	return `U+${ch.codePointAt(0)!.toString(16).toUpperCase().padStart(4, '0')}`;
}

/** Why the text is refused, in words a user can act on, or null when it is acceptable for its kind. */
export function textProblem(value: string, kind: TextKind): string | null {
	const surrogate = LONE_SURROGATE.exec(value);
	if (surrogate) return `contains a broken character (unpaired surrogate ${codePoint(surrogate[0])}); retype it`;
	if (value.includes('\u0000')) return 'contains a NUL character (U+0000); remove it';
	const control = CONTROL.exec(value);
	if (control) return `contains the control character ${codePoint(control[0])}; remove it`;
	if (kind !== 'multiline') {
		const lineBreak = /[\t\n\r]/.exec(value);
		if (lineBreak) return `must be one line without tabs or line breaks (found ${codePoint(lineBreak[0])})`;
	}
	const bidi = BIDI_CONTROL.exec(value);
	if (bidi) return `contains the bidirectional control ${codePoint(bidi[0])}, which can disguise what is displayed; remove it`;
	return null;
}

/** NFC, and for multi-line text CR LF / CR to LF, so the same words are always stored (and hashed) the same way. */
export function normaliseText(value: string, kind: TextKind): string {
	const nfc = value.normalize('NFC');
	return kind === 'multiline' ? nfc.replace(/\r\n?/g, '\n') : nfc;
}

/**
 * Wraps a string schema: normalises, then refuses problem characters with an issue on the field itself (so the
 * API answers 400 naming the field and forms show it beside the field). Non-strings pass to `inner` untouched.
 */
export function text<T extends z.ZodTypeAny>(kind: TextKind, inner: T) {
	return z.preprocess((value, ctx) => {
		if (typeof value !== 'string') return value;
		// Checked before normalising: NFC leaves these characters as they are, and the message names what was sent.
		const problem = textProblem(kind === 'multiline' ? value.replace(/\r\n?/g, '\n') : value, kind);
		if (problem) {
			ctx.addIssue({ code: z.ZodIssueCode.custom, message: `This text ${problem}`, fatal: true });
			return z.NEVER;
		}
		return normaliseText(value, kind);
	}, inner);
}

/** Shorthands for the common shapes. */
export const nameText = (inner: z.ZodString = z.string()) => text('name', inner);
export const lineText = (inner: z.ZodString = z.string()) => text('line', inner);
export const proseText = (inner: z.ZodString = z.string()) => text('multiline', inner);

/**
 * Walks a parsed JSON body and names the first string (value or key) that PostgreSQL could not store as sent:
 * NUL, other C0/C1 controls except tab, LF and CR, or an unpaired surrogate. Per-field schemas apply the stricter rules.
 */
export function unstorableTextPath(value: unknown, path: string[] = []): { path: string; problem: string } | null {
	const check = (s: string, at: string[]) => {
		const surrogate = LONE_SURROGATE.exec(s);
		if (surrogate) return { path: at.join('.') || '(body)', problem: `contains a broken character (unpaired surrogate ${codePoint(surrogate[0])})` };
		if (s.includes('\u0000')) return { path: at.join('.') || '(body)', problem: 'contains a NUL character (U+0000)' };
		const control = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F-\u009F]/.exec(s);
		if (control) return { path: at.join('.') || '(body)', problem: `contains the control character ${codePoint(control[0])}` };
		return null;
	};
	if (typeof value === 'string') return check(value, path);
	if (Array.isArray(value)) {
		for (const [i, item] of value.entries()) {
			const found = unstorableTextPath(item, [...path, String(i)]);
			if (found) return found;
		}
		return null;
	}
	if (value && typeof value === 'object') {
		for (const [key, item] of Object.entries(value)) {
			const keyProblem = check(key, [...path, key]);
			if (keyProblem) return keyProblem;
			const found = unstorableTextPath(item, [...path, key]);
			if (found) return found;
		}
	}
	return null;
}

/**
 * A file name as it may be shown or sent back: controls, bidi controls and path separators become "_".
 * The name as given stays in the record; only this form reaches a page, a header or an e-mail.
 */
export function displayFileName(name: string): string {
	const cleaned = name
		.replace(/[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/g, '_')
		.replace(/[\u0000-\u001F\u007F-\u009F\u200E\u200F\u202A-\u202E\u2066-\u2069/\\]/g, '_')
		.trim();
	return cleaned || 'file';
}

/** `Content-Disposition` with an ASCII fallback and the sanitised UTF-8 name in `filename*` (RFC 6266, RFC 8187). */
export function contentDisposition(kind: 'inline' | 'attachment', fileName: string): string {
	const shown = displayFileName(fileName);
	const ascii = shown.replace(/[^\x20-\x7E]/g, '_').replace(/["\\]/g, '_');
	const encoded = encodeURIComponent(shown).replace(/['()*]/g, (c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`);
	return `${kind}; filename="${ascii}"; filename*=UTF-8''${encoded}`;
}
