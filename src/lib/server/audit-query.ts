import type { AuditQuery } from './services/audit';

/** Reads the audit filters from a URL, shared by the page and its CSV export. */
export function auditQueryFrom(url: URL): AuditQuery & { raw: Record<string, string> } {
	const q = url.searchParams;
	const raw = { actor: q.get('actor') ?? '', entity: q.get('entity') ?? '', action: q.get('action') ?? '', from: q.get('from') ?? '', to: q.get('to') ?? '' };
	const date = (s: string, endOfDay = false) => {
		if (!/^\d{4}-\d{2}-\d{2}$/.test(s)) return undefined;
		const d = new Date(`${s}T00:00:00Z`);
		if (endOfDay) d.setUTCDate(d.getUTCDate() + 1);
		return d;
	};
	return {
		raw,
		actor: raw.actor || undefined,
		entity: raw.entity || undefined,
		action: raw.action || undefined,
		from: date(raw.from),
		to: date(raw.to, true),
		page: Math.max(1, Number(q.get('page') ?? 1) || 1)
	};
}
