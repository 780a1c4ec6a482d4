// Validation messages in Lotgate's own words (issue 17, item 18): no zod default text reaches a person, and a
// date field gives one message, never two run together. The zod defaults quoted below are zod 3's own strings.
import { z } from 'zod';
import { describe, expect, it } from 'vitest';
import { fieldLabel } from '../../../src/lib/validation/messages';
import { calendarDate, isCalendarDate } from '../../../src/lib/validation/date';
import { nameText } from '../../../src/lib/validation/text';

const messages = (schema: z.ZodTypeAny, value: unknown) => {
	const r = schema.safeParse(value);
	return r.success ? [] : r.error.issues.map((i) => i.message);
};

describe('the product error map replaces zod defaults', () => {
	it('a too-long text names the limit and the length typed, not "String must contain at most 120 character(s)"', () => {
		const got = messages(nameText(z.string().max(120)), 'x'.repeat(130));
		expect(got).toEqual(['Keep this to 120 characters or fewer (this has 130)']);
	});
	it('an empty required reason asks for a reason; other empty fields ask to fill them in', () => {
		expect(messages(z.object({ reason: z.string().min(1) }), { reason: '' })).toEqual(['Give a reason: it is kept with the record']);
		expect(messages(z.object({ serial: z.string() }), {})).toEqual(['Fill this in']);
	});
	it('numbers, e-mail addresses and choices', () => {
		expect(messages(z.coerce.number(), 'abc')).toEqual(['Enter a number']);
		expect(messages(z.number().int().min(1), 0)).toEqual(['Use a number of at least 1']);
		expect(messages(z.string().email(), 'not-an-address')).toEqual(['Enter an e-mail address, e.g. name@site.example']);
		expect(messages(z.enum(['NIR', 'Raman']), 'UV')).toEqual(['Choose one of: NIR, Raman']);
	});
	it('a message a schema gives itself still wins', () => {
		expect(messages(z.string().max(3, 'At most 3 letters'), 'abcd')).toEqual(['At most 3 letters']);
	});
	it('no default zod wording is left for common issues', () => {
		const all = [
			...messages(z.string().min(5), 'ab'),
			...messages(z.string().max(2), 'abc'),
			...messages(z.array(z.string()).min(1), []),
			...messages(z.object({ a: z.string() }), { a: 3 }),
			...messages(z.literal('x'), 'y')
		];
		for (const m of all) expect(m).not.toMatch(/String must contain|Required|Expected \w+, received|Invalid (input|enum|literal)|Array must contain/);
	});
});

describe('calendar dates', () => {
	it('a wrong shape gives one message, not also "not a calendar date"', () => {
		expect(messages(calendarDate(), '04/03/2025')).toEqual(['Enter the date as YYYY-MM-DD, e.g. 2025-03-04']);
	});
	it('a day that does not exist is named', () => {
		expect(messages(calendarDate(), '2025-02-29')).toEqual(['There is no 2025-02-29 on the calendar: check the day and month']);
		expect(messages(calendarDate(), '2025-04-31')).toHaveLength(1);
	});
	// Leap years by the Gregorian rule (ISO 8601 calendar): 2024 and 2000 are leap years, 1900 is not.
	it('leap days follow the Gregorian rule', () => {
		expect(isCalendarDate('2024-02-29')).toBe(true);
		expect(isCalendarDate('2000-02-29')).toBe(true);
		expect(isCalendarDate('1900-02-29')).toBe(false);
		expect(messages(calendarDate(), '2025-03-04')).toEqual([]);
	});
});

describe('field labels beside row messages', () => {
	it('turn keys into words', () => {
		expect(fieldLabel('qualificationDue')).toBe('Qualification due');
		expect(fieldLabel('reason')).toBe('Reason');
	});
});
