// Issue 12 §1, periodic review: an approved version has a review-by date; the chemometrician's and QA's home pages
// list the overdue and due-soon versions; a version past its date keeps screening but each verdict it gives carries
// "model review overdue" (lot view and API field, certificate); the review is recorded with a signature and its audit
// event ("fit for use" sets the next date, "revalidate" keeps it); revalidation triggers: a library change and
// 3 invalidated scans within 30 days (a new instrument: tests/integration/transfer.test.ts).
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { reviewStatus } from '../../src/lib/model-review';
import { sequelize } from '../../src/lib/server/db';
import * as dispositions from '../../src/lib/server/services/dispositions';
import * as invalidations from '../../src/lib/server/services/invalidations';
import * as library from '../../src/lib/server/services/library';
import * as lots from '../../src/lib/server/services/lots';
import * as modelReviews from '../../src/lib/server/services/model-reviews';
import * as versions from '../../src/lib/server/services/model-versions';
import { queuesFor } from '../../src/lib/server/services/queues';
import * as scans from '../../src/lib/server/services/scans';
import { makeUser, unique } from '../support/factories';
import { approvedMaterial, jcamp, synth, type LotFixture } from '../support/lot-fixtures';

const q = <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => sequelize().query<T>(sql, { replacements, type: QueryTypes.SELECT });
const dayOffset = (days: number) => new Date(Date.now() + days * 86_400_000).toISOString().slice(0, 10);
const setReviewBy = (versionId: number, date: string) => sequelize().query('UPDATE model_versions SET review_by = :date WHERE id = :id', { replacements: { date, id: versionId } });

let fx: LotFixture;
let tech: Awaited<ReturnType<typeof makeUser>>;
let chemist: Awaited<ReturnType<typeof makeUser>>;
let qa: Awaited<ReturnType<typeof makeUser>>;
let qa2: Awaited<ReturnType<typeof makeUser>>;
let both: Awaited<ReturnType<typeof makeUser>>;

beforeAll(async () => {
	fx = await approvedMaterial();
	[tech, chemist, qa, qa2, both] = await Promise.all([makeUser(['technician']), makeUser(['chemometrician']), makeUser(['qa']), makeUser(['qa']), makeUser(['chemometrician', 'qa'])]);
}, 120_000);

const receive = (containers: number) => lots.create(tech.actor, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('MR'), containers, receivedAt: new Date().toISOString().slice(0, 10) });
const file = (seed: number, kind: Parameters<typeof jcamp>[0] = 'genuine') => ({ bytes: jcamp(kind, fx.axis, seed, `C${seed}.jdx`), fileName: `C${seed}.jdx` });
const label = () => `${fx.materialCode} v1`;

describe('review state (the rule)', () => {
	it('is in time beyond 30 days, due soon from 30 days before the date to the date itself, overdue from the day after', () => {
		expect(reviewStatus('2027-01-31', '2026-12-31')).toEqual({ state: 'in-time', reviewBy: '2027-01-31', daysLeft: 31 });
		expect(reviewStatus('2027-01-30', '2026-12-31')).toEqual({ state: 'due-soon', reviewBy: '2027-01-30', daysLeft: 30 });
		expect(reviewStatus('2026-12-31', '2026-12-31')).toEqual({ state: 'due-soon', reviewBy: '2026-12-31', daysLeft: 0 });
		expect(reviewStatus('2026-12-30', '2026-12-31')).toEqual({ state: 'overdue', reviewBy: '2026-12-30', daysLeft: -1 });
		expect(reviewStatus(null, '2026-12-31').state).toBe('none');
		expect(() => reviewStatus('31/12/2026', '2026-12-31')).toThrow(/YYYY-MM-DD/);
	});
});

describe('periodic review of an approved version', () => {
	it('lists due-soon then overdue versions on both home pages; an overdue version keeps screening and its verdicts say so', async () => {
		await setReviewBy(fx.versionId, dayOffset(10));
		expect((await versions.get(fx.versionId)).review).toMatchObject({ state: 'due-soon', daysLeft: 10 });
		const soon = (await queuesFor(chemist.actor)).find((x) => x.key === 'reviews-due-soon')!;
		expect(soon.items.find((i) => i.label === label())?.detail).toBe(`review due ${dayOffset(10)} (in 10 days)`);
		expect((await queuesFor(chemist.actor)).find((x) => x.key === 'reviews-overdue')!.items.some((i) => i.label === label())).toBe(false);

		// a scan before the date: no note
		const lot = await receive(3);
		const inTime = await scans.add(tech.actor, lot.id, { ...file(61001), container: 1 });
		expect(inTime).toMatchObject({ verdict: 'genuine', modelReviewOverdue: false });

		await setReviewBy(fx.versionId, dayOffset(-3));
		const qaQueues = await queuesFor(qa.actor);
		const overdueQa = qaQueues.find((x) => x.key === 'reviews-overdue-qa')!;
		expect(overdueQa.items.find((i) => i.label === label())).toMatchObject({ href: `/materials/${fx.materialCode}/versions/1#review`, detail: `review overdue: due ${dayOffset(-3)} (3 days ago)` });
		// one list each for a user with both roles
		expect((await queuesFor(both.actor)).map((x) => x.key).filter((k) => k.startsWith('reviews-'))).toEqual(['reviews-overdue', 'reviews-due-soon']);
		// technicians do not get the list
		expect((await queuesFor(tech.actor)).some((x) => x.key.startsWith('reviews-'))).toBe(false);

		// past the date the version keeps screening; the verdict carries the note (service answer, lot view = API field)
		const late = await scans.add(tech.actor, lot.id, { ...file(61002), container: 2 });
		expect(late).toMatchObject({ verdict: 'genuine', modelReviewOverdue: true, modelVersion: { label: label() } });
		const late3 = await scans.add(tech.actor, lot.id, { ...file(61003), container: 3 });
		const view = await lots.get(lot.id);
		const byId = new Map(view.containers.flatMap((c) => c.scans).map((s) => [s.id, s]));
		expect(byId.get(inTime.scanId)!.modelReviewOverdue).toBe(false);
		expect(byId.get(late.scanId)!.modelReviewOverdue).toBe(true);
		expect(byId.get(late3.scanId)!.modelReviewOverdue).toBe(true);
		const [event] = await q<{ after: { modelReviewOverdue?: boolean } }>("SELECT after FROM audit_events WHERE action = 'lot.scan-added' AND entity_id = :lot ORDER BY id DESC LIMIT 1", { lot: String(lot.id) });
		expect(event.after.modelReviewOverdue).toBe(true);

		// the certificate of the released lot says it for containers 2 and 3, not for 1
		await dispositions.dispose(qa.actor, lot.id, { decision: 'release', meaning: 'released for use', reason: 'every container genuine', password: qa.password });
		const cert = await dispositions.certificate(lot.id);
		expect(cert.content.containers.map((c) => [c.container, c.modelReviewOverdue === true])).toEqual([
			[1, false],
			[2, true],
			[3, true]
		]);
		expect(cert.pdf.subarray(0, 5).toString()).toBe('%PDF-');
	});

	it('records the review with a signature and its audit event: revalidate keeps the date, fit for use sets the next one; earlier verdicts keep their note', async () => {
		await setReviewBy(fx.versionId, dayOffset(-5));
		const before = dayOffset(-5);
		const lot = await receive(2);
		const old = await scans.add(tech.actor, lot.id, { ...file(62001), container: 1 });
		expect(old.modelReviewOverdue).toBe(true);
		const sign = (u: { password: string }, outcome: string, reason = 'verdicts of the last year reviewed; no unexplained failure') => ({ outcome: outcome as modelReviews.ReviewOutcome, reason, password: u.password });

		await expect(modelReviews.record(tech.actor, fx.versionId, sign(tech, 'fit-for-use'))).rejects.toMatchObject({ status: 403 });
		await expect(modelReviews.record(chemist.actor, fx.versionId, sign(chemist, 'fine'))).rejects.toMatchObject({ status: 400, field: 'outcome', message: expect.stringMatching(/Choose the outcome/) });
		await expect(modelReviews.record(chemist.actor, fx.versionId, sign(chemist, 'fit-for-use', ''))).rejects.toMatchObject({ status: 400, field: 'reason' });
		await expect(modelReviews.record(chemist.actor, fx.versionId, { ...sign(chemist, 'fit-for-use'), meaning: 'approved for screening' })).rejects.toMatchObject({ status: 400, field: 'meaning' });
		await expect(modelReviews.record(chemist.actor, fx.versionId, { ...sign(chemist, 'fit-for-use'), password: 'not-the-password' })).rejects.toMatchObject({ status: 401, field: 'password' });
		expect(await modelReviews.forVersion(fx.versionId)).toEqual([]);

		const revalidate = await modelReviews.record(chemist.actor, fx.versionId, sign(chemist, 'revalidate', 'three invalidations from one instrument: rebuild with its spectra'));
		expect(revalidate).toMatchObject({ outcome: 'revalidate', reviewByBefore: before, reviewByAfter: before, signature: { meaning: modelReviews.REVIEW_MEANING, recordType: 'model_review' } });
		expect((await versions.get(fx.versionId)).review.state).toBe('overdue');

		const ok = await modelReviews.record(qa2.actor, fx.versionId, sign(qa2, 'fit-for-use'));
		const now = new Date();
		const next = new Date(Date.UTC(now.getUTCFullYear() + 1, now.getUTCMonth(), now.getUTCDate())).toISOString().slice(0, 10);
		expect(ok).toMatchObject({ outcome: 'fit-for-use', reviewByBefore: before, reviewByAfter: next });
		const v = await versions.get(fx.versionId);
		expect(v.reviewBy).toBe(next);
		expect(v.review.state).toBe('in-time');
		const history = await modelReviews.forVersion(fx.versionId);
		expect(history.map((r) => [r.outcome, r.reviewedBy, r.reviewByAfter])).toEqual([
			['fit-for-use', qa2.user.name, next],
			['revalidate', chemist.user.name, before]
		]);
		const events = await q<{ action: string; before: { reviewBy: string }; after: { outcome: string; reviewBy: string }; reason: string }>(
			"SELECT action, before, after, reason FROM audit_events WHERE action = 'model.reviewed' AND entity_id = :id ORDER BY id",
			{ id: String(fx.versionId) }
		);
		expect(events.map((e) => [e.before.reviewBy, e.after.outcome, e.after.reviewBy])).toEqual([
			[before, 'revalidate', before],
			[before, 'fit-for-use', next]
		]);
		expect(events[1].reason).toBe('verdicts of the last year reviewed; no unexplained failure');
		// off both lists now; new verdicts carry no note; the earlier one keeps it
		expect((await modelReviews.due()).overdue.some((d) => d.id === fx.versionId)).toBe(false);
		const fresh = await scans.add(tech.actor, lot.id, { ...file(62002), container: 2 });
		expect(fresh.modelReviewOverdue).toBe(false);
		const view = await lots.get(lot.id);
		expect(view.containers.flatMap((c) => c.scans).map((s) => [s.id, s.modelReviewOverdue])).toEqual([
			[old.scanId, true],
			[fresh.scanId, false]
		]);
	});

	it('only the approved version is reviewed', async () => {
		const draftLike = await q<{ id: number }>("INSERT INTO model_versions (material_id, version, state, params, built_by) SELECT material_id, 99, 'failed', params, built_by FROM model_versions WHERE id = :id RETURNING id", { id: fx.versionId });
		await expect(modelReviews.record(chemist.actor, Number(draftLike[0].id), { outcome: 'fit-for-use', reason: 'looked at it', password: chemist.password })).rejects.toMatchObject({ status: 409 });
	});
});

describe('revalidation triggers', () => {
	it('3 invalidated scans within 30 days add one "invalidations" trigger (not on the second), audited; a library upload adds "library change"', async () => {
		const own = await approvedMaterial();
		const ownFile = (seed: number, kind: Parameters<typeof jcamp>[0]) => ({ bytes: jcamp(kind, own.axis, seed, `C${seed}.jdx`), fileName: `C${seed}.jdx` });
		const triggers = async () => (await versions.get(own.versionId)).revalidation;
		const lot = await lots.create(tech.actor, { material: own.materialCode, supplier: own.supplierCode, supplierLot: unique('TRG'), containers: 4, receivedAt: new Date().toISOString().slice(0, 10) });
		const bad: number[] = [];
		for (let c = 1; c <= 4; c++) bad.push((await scans.add(tech.actor, lot.id, { ...ownFile(63000 + c, 'diluted-starch'), container: c })).scanId);
		const invalidate = async (scanId: number) => {
			await invalidations.propose(chemist.actor, lot.id, scanId, { cause: 'sample-presentation', description: 'probe window not in contact with the powder' });
			await invalidations.decide(qa.actor, lot.id, scanId, 'approve', { meaning: 'invalidation approved: assignable laboratory cause', reason: 'lab log confirms it', password: qa.password });
		};
		await invalidate(bad[0]);
		await invalidate(bad[1]);
		expect((await triggers()).filter((t) => t.kind === 'invalidations')).toEqual([]);
		await invalidate(bad[2]);
		const after3 = (await triggers()).filter((t) => t.kind === 'invalidations');
		expect(after3).toHaveLength(1);
		expect(after3[0].detail).toBe('3 scans of this material invalidated within 30 days (threshold 3)');
		await invalidate(bad[3]);
		expect((await triggers()).filter((t) => t.kind === 'invalidations')).toHaveLength(1);
		const audited = await q<{ after: { kind: string; count: number } }>("SELECT after FROM audit_events WHERE action = 'model.revalidation-triggered' AND entity_id = :id", { id: String(own.versionId) });
		expect(audited.map((a) => [a.after.kind, a.after.count])).toEqual([['invalidations', 3]]);

		// a library upload changes the material's library
		const csv = ['class,role,supplier_lot,' + Array.from(own.axis).join(','), ...[1, 2].map((i) => `genuine,training,LIB-${i},` + Array.from(jcampValues(own.axis, 63100 + i)).join(','))].join('\n');
		// transfer spectra (another instrument's check set) neither train nor validate: no trigger
		await library.addFiles(chemist.actor, own.materialId, [{ name: 'transfer.csv', bytes: new TextEncoder().encode(csv.replace(/genuine,training,/g, 'genuine,transfer,')) }], { classColumn: 'class' });
		expect((await triggers()).filter((t) => t.kind === 'library-change')).toEqual([]);
		await library.addFiles(chemist.actor, own.materialId, [{ name: 'more-genuine.csv', bytes: new TextEncoder().encode(csv) }], { classColumn: 'class' });
		const lib = (await triggers()).filter((t) => t.kind === 'library-change');
		expect(lib.map((t) => t.detail)).toEqual(['2 spectra added to the library (more-genuine.csv)']);
	});
});

function jcampValues(axis: Float64Array, seed: number) {
	return Array.from(synth('genuine', axis, seed), (v) => v.toFixed(6));
}
