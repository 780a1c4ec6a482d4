// The boundary text rule (issue 10 §1): what is refused, what is normalised, and that forms report it on the field.
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { contentDisposition, displayFileName, nameText, proseText, textProblem, unstorableTextPath } from '../../../src/lib/validation/text';

const schema = z.object({
	supplierLot: nameText(z.string().trim().min(1).max(80)),
	reason: proseText(z.string().trim().min(3).max(2000))
});

describe('text rule', () => {
	it.each([
		['NUL', 'LOT\u0000-1', /NUL/],
		['unpaired high surrogate', 'LOT\ud800-1', /unpaired surrogate U\+D800/],
		['unpaired low surrogate', 'LOT\udc00', /unpaired surrogate U\+DC00/],
		['right-to-left override', 'LOT-\u202E1-TOL', /bidirectional control U\+202E/],
		['left-to-right isolate', 'LOT\u20661', /U\+2066/],
		['escape', 'LOT\u001b[31m', /control character U\+001B/],
		['C1 control', 'LOT\u0085', /U\+0085/],
		['line break in a name', 'LOT\n1', /one line/],
		['tab in a name', 'LOT\t1', /one line/]
	])('refuses %s in a name', (_, value, message) => {
		expect(textProblem(value, 'name')).toMatch(message);
	});

	it('allows newline and tab in multi-line text, and a paired surrogate (emoji) anywhere', () => {
		expect(textProblem('line one\n\tline two', 'multiline')).toBeNull();
		expect(textProblem('Lot 7 \u{1F9EA}', 'name')).toBeNull();
		expect(textProblem('\u05D0\u05D1 right-to-left letters without overrides', 'name')).toBeNull();
	});

	it('normalises to NFC and CR LF to LF, and names the field in a zod error', () => {
		const ok = schema.parse({ supplierLot: 'Cafe\u0301-7', reason: 'first\r\nsecond\rthird' });
		expect(ok.supplierLot).toBe('Caf\u00e9-7');
		expect(ok.reason).toBe('first\nsecond\nthird');
		const refused = schema.safeParse({ supplierLot: 'A\u0000B', reason: 'fine reason' });
		expect(refused.success).toBe(false);
		expect(refused.error!.issues).toHaveLength(1);
		expect(refused.error!.issues[0].path).toEqual(['supplierLot']);
	});

	it('puts the refusal beside the field in a superforms form', async () => {
		const data = new FormData();
		data.set('supplierLot', 'LOT-\u202E7');
		data.set('reason', 'a good reason');
		const form = await superValidate(data, zod(schema));
		expect(form.valid).toBe(false);
		expect(form.errors.supplierLot?.[0]).toMatch(/bidirectional/);
		expect(form.errors.reason).toBeUndefined();
	});

	it('finds unstorable text anywhere in a JSON body, keys included', () => {
		expect(unstorableTextPath({ a: 'ok', list: ['x', { note: 'n\u0000' }] })).toMatchObject({ path: 'list.1.note' });
		expect(unstorableTextPath({ ['k\ud800']: 1 })).toMatchObject({ problem: /surrogate/ });
		expect(unstorableTextPath({ reason: 'two\r\nlines\ttab', n: 3 })).toBeNull();
	});

	it('sends file names sanitised, with filename* (RFC 8187)', () => {
		expect(displayFileName('scan\u202Efdj.exe')).toBe('scan_fdj.exe');
		expect(displayFileName('../etc/passwd')).toBe('.._etc_passwd');
		const header = contentDisposition('attachment', 'Prüfung\u202E "1".jdx');
		expect(header).toBe(`attachment; filename="Pr_fung_ _1_.jdx"; filename*=UTF-8''Pr%C3%BCfung_%20%221%22.jdx`);
	});
});
