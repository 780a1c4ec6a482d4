// Lotgate's own words for every validation message zod would otherwise write itself ("String must contain at most
// 120 character(s)", "Required", "Expected number, received nan"). Installed once for the whole zod instance, on the
// server (hooks.server.ts) and in the browser (the root layout, for the forms that validate client-side), so a schema
// that gives no message of its own still speaks the product's voice. A message a schema gives itself always wins.
import { z, ZodIssueCode, type ZodErrorMap } from 'zod';

const plural = (n: number | bigint, one: string, many = `${one}s`) => `${n} ${Number(n) === 1 ? one : many}`;

/** The last named key of an issue's path ("reason", "contacts"): some fields have a sentence of their own. */
function fieldOf(path: (string | number)[]): string {
	for (let i = path.length - 1; i >= 0; i--) if (typeof path[i] === 'string') return path[i] as string;
	return '';
}

/** Fields that are empty get a sentence saying what to write, where we know what the field is for. */
function emptyMessage(field: string): string {
	if (/reason|note|justification/i.test(field)) return 'Give a reason: it is kept with the record';
	if (/password/i.test(field)) return 'Enter your password';
	if (/email/i.test(field)) return 'Enter an e-mail address';
	if (/meaning/i.test(field)) return 'Choose the meaning of your signature';
	return 'Fill this in';
}

export const productErrorMap: ZodErrorMap = (issue, ctx) => {
	const field = fieldOf(issue.path);
	switch (issue.code) {
		case ZodIssueCode.invalid_type:
			if (issue.received === 'undefined' || issue.received === 'null') return { message: emptyMessage(field) };
			if (issue.expected === 'number' || issue.expected === 'bigint') return { message: 'Enter a number' };
			if (issue.expected === 'integer') return { message: 'Enter a whole number' };
			if (issue.expected === 'date') return { message: 'Enter a date' };
			if (issue.expected === 'boolean') return { message: 'Choose yes or no' };
			if (issue.expected === 'string') return { message: 'Enter text here' };
			if (issue.expected === 'array') return { message: 'Give a list here' };
			return { message: 'This value is not of the kind expected here' };
		case ZodIssueCode.too_small:
			if (issue.type === 'string') {
				if (Number(issue.minimum) <= 1) return { message: emptyMessage(field) };
				return { message: `Use at least ${plural(issue.minimum, 'character')}` };
			}
			if (issue.type === 'number' || issue.type === 'bigint') return { message: `Use a number of at least ${issue.minimum}` };
			if (issue.type === 'array' || issue.type === 'set') return { message: Number(issue.minimum) <= 1 ? 'Choose at least one' : `Choose at least ${issue.minimum}` };
			if (issue.type === 'date') return { message: 'Use a later date' };
			break;
		case ZodIssueCode.too_big:
			if (issue.type === 'string') {
				const typed = typeof ctx.data === 'string' ? ` (this has ${ctx.data.length})` : '';
				return { message: `Keep this to ${plural(issue.maximum, 'character')} or fewer${typed}` };
			}
			if (issue.type === 'number' || issue.type === 'bigint') return { message: `Use a number no larger than ${issue.maximum}` };
			if (issue.type === 'array' || issue.type === 'set') return { message: `Choose at most ${issue.maximum}` };
			if (issue.type === 'date') return { message: 'Use an earlier date' };
			break;
		case ZodIssueCode.invalid_string:
			if (issue.validation === 'email') return { message: 'Enter an e-mail address, e.g. name@site.example' };
			if (issue.validation === 'url') return { message: 'Enter a web address, e.g. https://site.example' };
			if (issue.validation === 'datetime' || issue.validation === 'date') return { message: 'Enter the date as YYYY-MM-DD, e.g. 2025-03-04' };
			if (issue.validation === 'regex') return { message: 'This is not in the expected form' };
			break;
		case ZodIssueCode.invalid_enum_value:
			return { message: `Choose one of: ${issue.options.map(String).join(', ')}` };
		case ZodIssueCode.invalid_literal:
			return { message: `Use ${JSON.stringify(issue.expected)} here` };
		case ZodIssueCode.not_multiple_of:
			return { message: `Use a multiple of ${issue.multipleOf}` };
		case ZodIssueCode.not_finite:
			return { message: 'Enter a finite number' };
		case ZodIssueCode.invalid_date:
			return { message: 'Enter a real date' };
		case ZodIssueCode.unrecognized_keys:
			return { message: `Not a field here: ${issue.keys.join(', ')}` };
		case ZodIssueCode.invalid_union:
		case ZodIssueCode.invalid_union_discriminator:
			return { message: 'This value is not one of the forms accepted here' };
	}
	return { message: ctx.defaultError };
};

z.setErrorMap(productErrorMap);


/** A form field's key as people read it beside its message: "qualificationDue" → "Qualification due". */
export function fieldLabel(key: string): string {
	const words = key.replace(/([a-z])([A-Z])/g, '$1 $2').toLowerCase();
	return words.charAt(0).toUpperCase() + words.slice(1);
}
