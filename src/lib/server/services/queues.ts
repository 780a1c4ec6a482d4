import type { Role } from '$lib/permissions';
import type { Actor } from './actor';
import * as alerts from './alerts';
import * as dispositions from './dispositions';
import * as drift from './drift';
import * as lots from './lots';
import * as modelReviews from './model-reviews';
import * as modelVersions from './model-versions';
import * as supplierStatus from './supplier-status';

export interface QueueItem {
	/** Unique within its queue by construction: the source's name, then its own id or link, numbered when repeated. */
	key?: string;
	href: string;
	label: string;
	detail?: string;
}
export interface Queue {
	key: string;
	role: Role;
	title: string;
	empty: string;
	items: QueueItem[];
	action?: { href: string; label: string };
}

type QueueDefinition = Omit<Queue, 'items'> & { items?: (actor: Actor) => Promise<QueueItem[]>; /** shown only when the queue of this key is not already shown (one list for a user with both roles) */ sameAs?: string };

// issue 12 §1: the periodic reviews, on the chemometrician's and on QA's home page (overdue, and due within 30 days).
const reviewQueues = (role: 'chemometrician' | 'qa', suffix: string): QueueDefinition[] => [
	{ key: `reviews-overdue${suffix}`, role, title: 'Model reviews overdue', empty: 'No approved model version is past its review-by date.', items: () => modelReviews.queueItems('overdue'), ...(suffix ? { sameAs: 'reviews-overdue' } : {}) },
	{ key: `reviews-due-soon${suffix}`, role, title: 'Model reviews due soon', empty: 'No model review is due within 30 days.', items: () => modelReviews.queueItems('dueSoon'), ...(suffix ? { sameAs: 'reviews-due-soon' } : {}) }
];

/** Lots for a home queue: awaiting scans (technicians) or screened and awaiting disposition (QA). */
async function lotItems(status: 'awaiting-scans' | 'screened', skip: Set<string> = new Set()): Promise<QueueItem[]> {
	return (await lots.awaiting(status)).filter((l) => !skip.has(l.internalLot)).map((l) => ({
		key: `lot:${l.id}`,
		href: `/lots/${l.internalLot}`,
		label: `${l.internalLot} · ${l.material.code} from ${l.supplier.code}`,
		detail:
			status === 'awaiting-scans'
				? `${l.screenedCount} of ${l.sampledCount} containers screened`
				: `awaiting disposition · ${l.identity === 'meets' ? 'meets identity' : l.identity === 'fails' ? 'fails identity' : 'screened'}`
	}));
}

// One queue per role; each workflow fills its queue's `items` from its own service.
const QUEUES: QueueDefinition[] = [
	{ key: 'awaiting-scans', role: 'technician', title: 'Lots awaiting scans', empty: 'No lot is waiting for scans.', action: { href: '/lots/new', label: 'Receive a lot' }, items: () => lotItems('awaiting-scans') },
	{ key: 'model-drafts', role: 'chemometrician', title: 'Model drafts', empty: 'No draft model version is open.', action: { href: '/materials', label: 'Go to materials' }, items: (actor) => modelVersions.queueItems('chemometrician', actor) },
	...reviewQueues('chemometrician', ''),
	{ key: 'drift-signals', role: 'chemometrician', title: 'Supplier drift signals', empty: 'No supplier is drifting.', action: { href: '/suppliers', label: 'Suppliers' }, items: () => drift.queueItems() },
	{ key: 'qa-review', role: 'qa', title: 'Waiting for QA', empty: 'No lot or model version waits for a QA decision.', items: async (actor) => {
			// A lot whose release waits for a second signature shows once, as that, not also as "awaiting disposition".
			const pending = await dispositions.queueItems(actor);
			const pendingLots = new Set(pending.map((p) => p.internalLot));
			return unique([
				['lot', await lotItems('screened', pendingLots)],
				['disposition', pending],
				['supplier-status', await supplierStatus.queueItems(actor)],
				['model-version', await modelVersions.queueItems('qa', actor)]
			]);
		} },
	...reviewQueues('qa', '-qa'),
	{ key: 'supplier-alerts', role: 'procurement', title: 'Open supplier alerts', empty: 'No supplier alert is open.', action: { href: '/alerts', label: 'All alerts' }, items: () => alerts.queueItems() },
	{ key: 'admin', role: 'admin', title: 'Administration', empty: 'Users, instruments and their tokens.', action: { href: '/admin', label: 'Open admin' } },
	{ key: 'audit-trail', role: 'auditor', title: 'Audit trail', empty: 'Every recorded change, with who, when and why; read it or export it as CSV.', action: { href: '/audit', label: 'Open the audit trail' } }
];

/** Joins the items of several sources with keys that are unique by construction (the each-block key on the home page). */
export function unique(sources: [string, QueueItem[]][]): QueueItem[] {
	const seen = new Map<string, number>();
	const out: QueueItem[] = [];
	for (const [source, items] of sources) {
		for (const item of items) {
			const base = `${source}:${item.key ?? item.href}`;
			const n = seen.get(base) ?? 0;
			seen.set(base, n + 1);
			out.push({ href: item.href, label: item.label, detail: item.detail, key: n ? `${base}#${n + 1}` : base });
		}
	}
	return out;
}

export async function queuesFor(actor: Actor): Promise<Queue[]> {
	const held = QUEUES.filter((q) => actor.roles.includes(q.role));
	const shown = new Set(held.map((q) => q.key));
	const mine = held.filter((q) => !q.sameAs || !shown.has(q.sameAs));
	return Promise.all(mine.map(async ({ items, sameAs: _sameAs, ...queue }) => ({ ...queue, items: items ? unique([[queue.key, await items(actor)]]) : [] })));
}
