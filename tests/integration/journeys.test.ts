// Journeys from the practitioners' walk-through (issue 17) against the real PostgreSQL: the second QA signature
// (one pending release per lot, the first signer waits, home-queue keys unique), and the defaults of signed forms.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeUser, unique } from '../support/factories';
import { approvedMaterial, jcamp, type LotFixture } from '../support/lot-fixtures';

type Svc = {
	lots: typeof import('../../src/lib/server/services/lots');
	scans: typeof import('../../src/lib/server/services/scans');
	dispositions: typeof import('../../src/lib/server/services/dispositions');
	queues: typeof import('../../src/lib/server/services/queues');
};
let s: Svc;
let fx: LotFixture;
let qa1: Awaited<ReturnType<typeof makeUser>>;
let qa2: Awaited<ReturnType<typeof makeUser>>;
let tech: Awaited<ReturnType<typeof makeUser>>;
let seed = 880_000;

beforeAll(async () => {
	s = {
		lots: await import('../../src/lib/server/services/lots'),
		scans: await import('../../src/lib/server/services/scans'),
		dispositions: await import('../../src/lib/server/services/dispositions'),
		queues: await import('../../src/lib/server/services/queues')
	};
	fx = await approvedMaterial({ policy: 'every-container' });
	qa1 = await makeUser(['qa']);
	qa2 = await makeUser(['qa']);
	tech = await makeUser(['technician']);
}, 120_000);

afterAll(async () => {});

/** A lot of two containers, one genuine and one diluted, so it fails identity. */
async function failedLot() {
	const supplierLot = unique('SL');
	const lot = await s.lots.create(tech.actor, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot, containers: 2, receivedAt: '2025-05-06' });
	const title = (c: number) => `${fx.materialCode}, lot ${supplierLot}, container ${c}`;
	await s.scans.add(tech.actor, lot.id, { bytes: jcamp('genuine', fx.axis, seed++, title(1)), fileName: 'c1.jdx', container: 1 });
	await s.scans.add(tech.actor, lot.id, { bytes: jcamp('diluted-starch', fx.axis, seed++, title(2)), fileName: 'c2.jdx', container: 2 });
	const view = await s.lots.get(lot.id);
	expect(view.identity).toBe('fails');
	return view;
}
const sign = (who: Awaited<ReturnType<typeof makeUser>>, reason: string) => ({ meaning: 'released for use', reason, password: who.password });

describe('second QA signature', () => {
	it('refuses a second pending release of the same lot (409), from the first signer or anyone else', async () => {
		const lot = await failedLot();
		const first = await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign(qa1, 'retested by HPLC, within specification') });
		expect(first.disposition.state).toBe('awaiting-second-signature');
		await expect(s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign(qa1, 'signing again') })).rejects.toMatchObject({ status: 409, code: 'second-signature-pending' });
		await expect(s.dispositions.dispose(qa2.actor, lot.id, { decision: 'release', ...sign(qa2, 'my own release') })).rejects.toMatchObject({ status: 409, code: 'second-signature-pending' });
		const history = await s.dispositions.forLot(lot.id);
		expect(history.filter((d) => d.state === 'awaiting-second-signature')).toHaveLength(1);
		// The second QA user co-signs it: the release takes effect with two different signers.
		const done = await s.dispositions.cosign(qa2.actor, first.disposition.id, { meaning: 'approved as second QA manager', reason: 'reviewed the retest record', password: qa2.password });
		expect(done.disposition.state).toBe('effective');
		expect(done.disposition.signatures.map((x) => x.signerId)).toEqual([qa1.user.id, qa2.user.id]);
	});

	it('still lets a QA user withdraw the pending release with quarantine', async () => {
		const lot = await failedLot();
		await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign(qa1, 'retested, fine') });
		const q = await s.dispositions.dispose(qa2.actor, lot.id, { decision: 'quarantine', meaning: 'quarantined pending investigation', reason: 'wait for the supplier CoA', password: qa2.password });
		expect(q.disposition.state).toBe('effective');
		expect((await s.dispositions.forLot(lot.id)).filter((d) => d.state === 'awaiting-second-signature')).toHaveLength(0);
	});

	it('shows the first signer "waiting for a second signature by another QA user" and keeps home-queue keys unique', async () => {
		const lot = await failedLot();
		await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign(qa1, 'retested, fine') });
		for (const who of [qa1, qa2]) {
			const [queue] = (await s.queues.queuesFor(who.actor)).filter((x) => x.key === 'qa-review');
			const keys = queue.items.map((i) => i.key);
			expect(new Set(keys).size).toBe(keys.length);
			const mine = queue.items.filter((i) => i.href === `/lots/${lot.internalLot}`);
			// Once, as the pending release, not also as "awaiting disposition".
			expect(mine).toHaveLength(1);
			if (who === qa1) expect(mine[0].detail).toBe('waiting for a second signature by another QA user');
			else expect(mine[0].label).toContain('release needs a second signature');
		}
	});

	it('numbers repeated links so each-block keys never collide', () => {
		const items = s.queues.unique([
			['lot', [{ href: '/lots/A', label: 'a' }, { href: '/lots/A', label: 'a again' }]],
			['disposition', [{ key: 'disposition:1', href: '/lots/A', label: 'b' }]]
		]);
		expect(items.map((i) => i.key)).toEqual(['lot:/lots/A', 'lot:/lots/A#2', 'disposition:disposition:1']);
	});
});
