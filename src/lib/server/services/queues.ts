import type { Role } from '$lib/permissions';
import type { Actor } from './actor';

export interface QueueItem {
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

type QueueDefinition = Omit<Queue, 'items'> & { items?: (actor: Actor) => Promise<QueueItem[]> };

// One queue per role; each workflow fills its queue's `items` from its own service.
const QUEUES: QueueDefinition[] = [
	{ key: 'awaiting-scans', role: 'technician', title: 'Lots awaiting scans', empty: 'No lot is waiting for scans.', action: { href: '/lots', label: 'Go to lots' } },
	{ key: 'model-drafts', role: 'chemometrician', title: 'Model drafts', empty: 'No draft model version is open.', action: { href: '/materials', label: 'Go to materials' } },
	{ key: 'qa-review', role: 'qa', title: 'Waiting for QA', empty: 'No lot or model version waits for a QA decision.' },
	{ key: 'supplier-alerts', role: 'procurement', title: 'Open supplier alerts', empty: 'No supplier alert is open.', action: { href: '/suppliers', label: 'Supplier scorecards' } },
	{ key: 'admin', role: 'admin', title: 'Administration', empty: 'Users, instruments and their tokens.', action: { href: '/admin', label: 'Open admin' } }
];

export async function queuesFor(actor: Actor): Promise<Queue[]> {
	const mine = QUEUES.filter((q) => actor.roles.includes(q.role));
	return Promise.all(mine.map(async ({ items, ...queue }) => ({ ...queue, items: items ? await items(actor) : [] })));
}
