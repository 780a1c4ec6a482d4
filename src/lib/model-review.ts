// Periodic review of an approved model version (issue 12 §1): where a version stands against its review-by date.
// Shared by the server (queues, scans) and the pages. A version is overdue from the day after its review-by date
// (the review-by date itself is still in time); it is due soon from DUE_SOON_DAYS before it.

/** How far ahead a review shows as "due soon" on the home pages (common practice: a month's notice). */
export const DUE_SOON_DAYS = 30;

/** The note every verdict of an overdue version carries (lot page, API, certificate). */
export const REVIEW_OVERDUE_NOTE = 'model review overdue';

export type ReviewState = 'overdue' | 'due-soon' | 'in-time' | 'none';

export interface ReviewStatus {
	state: ReviewState;
	reviewBy: string | null;
	/** whole days from today to the review-by date (negative when overdue); null without a date */
	daysLeft: number | null;
}

const DAY = 86_400_000;
const ISO_DATE = /^\d{4}-\d{2}-\d{2}$/;

/** Today's date in UTC as YYYY-MM-DD. */
export function utcToday(now: Date = new Date()): string {
	return now.toISOString().slice(0, 10);
}

/** The review state of a version whose review-by date is `reviewBy` (YYYY-MM-DD or null), on `today` (YYYY-MM-DD, UTC). */
export function reviewStatus(reviewBy: string | null | undefined, today: string = utcToday()): ReviewStatus {
	if (!ISO_DATE.test(today)) throw new Error(`today must be a date written YYYY-MM-DD, not "${today}"`);
	if (reviewBy == null || reviewBy === '') return { state: 'none', reviewBy: null, daysLeft: null };
	if (!ISO_DATE.test(reviewBy)) throw new Error(`a review-by date must be written YYYY-MM-DD, not "${reviewBy}"`);
	const daysLeft = Math.round((Date.parse(`${reviewBy}T00:00:00Z`) - Date.parse(`${today}T00:00:00Z`)) / DAY);
	const state: ReviewState = daysLeft < 0 ? 'overdue' : daysLeft <= DUE_SOON_DAYS ? 'due-soon' : 'in-time';
	return { state, reviewBy, daysLeft };
}

/** "overdue since 2026-01-31 (12 days)", "due 2026-02-10 (in 9 days)", "review by 2027-01-01". */
export function reviewText(s: ReviewStatus): string {
	if (s.state === 'none' || s.reviewBy == null || s.daysLeft == null) return 'no review-by date';
	const days = (n: number) => `${n} day${n === 1 ? '' : 's'}`;
	if (s.state === 'overdue') return `review overdue: due ${s.reviewBy} (${days(-s.daysLeft)} ago)`;
	if (s.state === 'due-soon') return s.daysLeft === 0 ? `review due today (${s.reviewBy})` : `review due ${s.reviewBy} (in ${days(s.daysLeft)})`;
	return `review by ${s.reviewBy}`;
}
