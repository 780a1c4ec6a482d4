// The comma-separated e-mail list of the "New material" and "Add a supplier" forms: superforms must see one text
// field (a zod array field made it report an error object, shown as "[object Object]"), with a readable message.
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { chooseOne, emailListField, splitList } from '../../../src/lib/server/forms';

const schema = z.object({ code: z.string(), contacts: emailListField('contacts', 3) });
const post = (fields: Record<string, string>) => {
	const body = new FormData();
	for (const [k, v] of Object.entries(fields)) body.append(k, v);
	return new Request('http://localhost/', { method: 'POST', body });
};

describe('e-mail list field', () => {
	it('accepts a comma-separated list and keeps it a string for the form', async () => {
		const form = await superValidate(post({ code: 'A', contacts: 'qa@site.example, lab@site.example' }), zod(schema));
		expect(form.valid).toBe(true);
		expect(form.data.contacts).toBe('qa@site.example, lab@site.example');
		expect(splitList(form.data.contacts)).toEqual(['qa@site.example', 'lab@site.example']);
	});

	it('accepts an empty list', async () => {
		const form = await superValidate(post({ code: 'A', contacts: '' }), zod(schema));
		expect(form.valid).toBe(true);
		expect(splitList(form.data.contacts)).toEqual([]);
	});

	it('names the part that is not an e-mail address, as text beside the field', async () => {
		const form = await superValidate(post({ code: 'A', contacts: 'qa@site.example, not-an-address' }), zod(schema));
		expect(form.valid).toBe(false);
		const errors = form.errors.contacts;
		expect(Array.isArray(errors)).toBe(true);
		expect(typeof errors![0]).toBe('string');
		expect(errors![0]).toContain('“not-an-address” is not an e-mail address');
		expect(String(errors)).not.toContain('[object Object]');
	});

	it('refuses more addresses than allowed', async () => {
		const form = await superValidate(post({ code: 'A', contacts: 'a@x.org, b@x.org, c@x.org, d@x.org' }), zod(schema));
		expect(form.valid).toBe(false);
		expect(form.errors.contacts![0]).toBe('List at most 3 contacts (4 given)');
	});

	it('splits on commas, semicolons and spaces', () => {
		expect(splitList(' a@x.org;b@x.org\n c@x.org ,, ')).toEqual(['a@x.org', 'b@x.org', 'c@x.org']);
	});
});

describe('a choice with no default (signed and recorded forms)', () => {
	const signed = z.object({ decision: chooseOne(['release', 'quarantine', 'reject'], 'Choose release, quarantine or reject'), reason: z.string() });
	it('starts empty: nothing is pre-selected', async () => {
		const form = await superValidate(zod(signed));
		expect(form.data.decision).toBe('');
	});
	it('refuses a submission without a choice, with the message beside the field', async () => {
		const form = await superValidate(post({ reason: 'no decision chosen' }), zod(signed));
		expect(form.valid).toBe(false);
		expect(form.errors.decision).toEqual(['Choose release, quarantine or reject']);
	});
	it('refuses a value that is not an option and accepts a real one', async () => {
		expect((await superValidate(post({ decision: 'approve', reason: 'x' }), zod(signed))).valid).toBe(false);
		const ok = await superValidate(post({ decision: 'quarantine', reason: 'x' }), zod(signed));
		expect(ok.valid).toBe(true);
		expect(ok.data.decision).toBe('quarantine');
	});
});
