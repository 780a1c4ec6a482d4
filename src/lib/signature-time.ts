// Signature times are stored in UTC and printed with their zone (21 CFR 11.50: date and time of signing).
export const DEFAULT_TIME_ZONE = 'UTC';

/** "2025-03-04 14:05:09 UTC" (or the zone's short name, e.g. "CET"), stable for the same instant and zone. */
export function formatZoned(iso: string | Date, timeZone = DEFAULT_TIME_ZONE): string {
	const date = typeof iso === 'string' ? new Date(iso) : iso;
	const parts = Object.fromEntries(
		new Intl.DateTimeFormat('en-GB', {
			timeZone,
			year: 'numeric',
			month: '2-digit',
			day: '2-digit',
			hour: '2-digit',
			minute: '2-digit',
			second: '2-digit',
			hourCycle: 'h23',
			timeZoneName: 'short'
		})
			.formatToParts(date)
			.map((p) => [p.type, p.value])
	);
	return `${parts.year}-${parts.month}-${parts.day} ${parts.hour}:${parts.minute}:${parts.second} ${parts.timeZoneName}`;
}
