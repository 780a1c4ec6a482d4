// One rule for a calendar date typed as YYYY-MM-DD, with one message per problem: a wrong shape is not also
// reported as "not a calendar date" (two messages used to run together under the field).
import { z } from 'zod';

/** Whether `s` (already YYYY-MM-DD) names a day that exists: 2024-02-29 does, 2025-02-29 and 2025-04-31 do not. */
export function isCalendarDate(s: string): boolean {
	const d = new Date(`${s}T00:00:00Z`);
	return !Number.isNaN(d.getTime()) && d.toISOString().slice(0, 10) === s;
}

/** A string schema for a YYYY-MM-DD calendar date; at most one issue, in our words. */
export function calendarDate() {
	return z
		.string()
		.trim()
		.superRefine((s, ctx) => {
			if (!/^\d{4}-\d{2}-\d{2}$/.test(s)) ctx.addIssue({ code: z.ZodIssueCode.custom, message: 'Enter the date as YYYY-MM-DD, e.g. 2025-03-04' });
			else if (!isCalendarDate(s)) ctx.addIssue({ code: z.ZodIssueCode.custom, message: `There is no ${s} on the calendar: check the day and month` });
		});
}
