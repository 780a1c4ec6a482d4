// Password rules after NIST SP 800-63B (rev. 3, 2017, §5.1.1.2 "Memorized Secret Verifiers"): a minimum length, no
// composition rules, no forced periodic change, and a check against values known to be commonly used or expected
// (a list of common passwords, and context-specific words such as the user's own e-mail address).
import { createRequire } from 'node:module';

export const PASSWORD_MIN_LENGTH = 12;
export const PASSWORD_MAX_LENGTH = 200;

// @zxcvbn-ts/language-common (MIT licence): about 49,000 of the most common leaked passwords, lower case.
// Loaded at the first password check, not at import: decompressing the dictionaries costs about half a second of CPU
// and much garbage, which every server start (and the sign-in page's first answer) would otherwise pay.
let common: Set<string> | null = null;
const load = createRequire(import.meta.url);
const commonPasswords = () =>
	(common ??= new Set((load('@zxcvbn-ts/language-common') as typeof import('@zxcvbn-ts/language-common')).dictionary['passwords-common'].map((p) => p.toLowerCase())));

/** The first rule a candidate breaks, as a sentence for the form; null when it is acceptable. */
export function passwordProblem(password: string, email?: string | null): string | null {
	const length = [...password].length;
	if (length < PASSWORD_MIN_LENGTH) return `Use at least ${PASSWORD_MIN_LENGTH} characters`;
	if (length > PASSWORD_MAX_LENGTH) return `Use at most ${PASSWORD_MAX_LENGTH} characters`;
	const lower = password.toLowerCase();
	if (commonPasswords().has(lower)) return 'This password is on a list of commonly used passwords: choose another';
	if (email) {
		const address = email.trim().toLowerCase();
		const local = address.split('@')[0];
		if (lower.includes(address) || (local.length >= 4 && lower.includes(local))) return 'The password must not contain your e-mail address or user name';
	}
	if (new Set(lower).size < 3) return 'The password repeats too few different characters';
	return null;
}
