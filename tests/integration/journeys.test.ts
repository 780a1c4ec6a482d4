// Journeys from the practitioners' walk-through (issue 17) against the real PostgreSQL: the second QA signature
// (one pending release per lot, the first signer waits, home-queue keys unique), and the defaults of signed forms.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeUser, rootActor, unique } from '../support/factories';
import { approvedMaterial, jcamp, type LotFixture } from '../support/lot-fixtures';
import type { Actor } from '../../src/lib/server/services/actor';

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
let admin: Awaited<ReturnType<typeof makeUser>>;
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
	admin = await makeUser(['admin']);
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

describe('evidence that cannot be reused', () => {
	async function newLot(containers = 2) {
		const supplierLot = unique('SL');
		const lot = await s.lots.create(tech.actor, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot, containers, receivedAt: '2025-05-06' });
		return { ...lot, supplierLot };
	}
	const q = async <T extends object>(sql: string, replacements: Record<string, unknown>) => {
		const { sequelize } = await import('../../src/lib/server/db');
		const { QueryTypes } = await import('sequelize');
		return sequelize().query<T>(sql, { replacements, type: QueryTypes.SELECT });
	};

	it('refuses the bytes of another lot’s container as a new scan, naming where they are stored, and stores nothing', async () => {
		const a = await newLot();
		const b = await newLot();
		const bytes = jcamp('genuine', fx.axis, seed++, 'plain scan');
		const first = await s.scans.add(tech.actor, a.id, { bytes, fileName: 'a-c1.jdx', container: 1 });
		const before = (await q<{ n: number }>('SELECT count(*)::int AS n FROM spectra WHERE context = :c AND context_id = :id', { c: 'lot', id: b.id }))[0]!.n;
		const err = await s.scans.add(tech.actor, b.id, { bytes, fileName: 'b-c1.jdx', container: 1 }).catch((e) => e);
		expect(err).toMatchObject({ status: 409, code: 'duplicate-elsewhere', field: 'file' });
		expect(err.message).toContain(`lot ${a.internalLot}, container C01 (scan #${first.scanId}`);
		expect(err.details.confirm).toBeUndefined();
		expect((await q<{ n: number }>('SELECT count(*)::int AS n FROM spectra WHERE context = :c AND context_id = :id', { c: 'lot', id: b.id }))[0]!.n).toBe(before);
		expect((await s.lots.get(b.id)).scans).toHaveLength(0);
		// A technician's "reason" does not open the door: only an admin may override.
		await expect(s.scans.add(tech.actor, b.id, { bytes, fileName: 'b-c1.jdx', container: 1, duplicateOverrideReason: 'I am sure it is fine' })).rejects.toMatchObject({ code: 'duplicate-elsewhere' });
	});

	it('lets an admin store such bytes for a documented case, with the reason in the audit trail', async () => {
		const a = await newLot();
		const b = await newLot();
		const bytes = jcamp('genuine', fx.axis, seed++, 'plain scan');
		await s.scans.add(tech.actor, a.id, { bytes, fileName: 'a-c2.jdx', container: 2 });
		const short = await s.scans.add(admin.actor, b.id, { bytes, fileName: 'b-c2.jdx', container: 2, duplicateOverrideReason: 'ok' }).catch((e) => e);
		expect(short).toMatchObject({ status: 409, code: 'duplicate-elsewhere' });
		expect(short.details.confirm).toMatchObject({ field: 'duplicateOverrideReason', minLength: 10 });
		const reason = 'Deviation DV-2025-014: one composite sample was split between the two lots by the supplier';
		const added = await s.scans.add(admin.actor, b.id, { bytes, fileName: 'b-c2.jdx', container: 2, duplicateOverrideReason: reason });
		const [event] = await q<{ after: { scanId: number; duplicateOverride: { reason: string; storedAt: string[] } } }>(
			"SELECT after FROM audit_events WHERE action = 'lot.scan-added' AND entity_id = :lot ORDER BY id DESC LIMIT 1",
			{ lot: String(b.id) }
		);
		expect(event!.after.scanId).toBe(added.scanId);
		expect(event!.after.duplicateOverride.reason).toBe(reason);
		expect(event!.after.duplicateOverride.storedAt[0]).toContain(`lot ${a.internalLot}, container C02`);
	});

	it('asks for a confirmation when the header names another lot or container, and records it', async () => {
		const lot = await newLot();
		const other = jcamp('genuine', fx.axis, seed++, `${fx.materialCode}, lot PT-25-009, container 02`);
		const err = await s.scans.add(tech.actor, lot.id, { bytes: other, fileName: 'c1.jdx', container: 1 }).catch((e) => e);
		expect(err).toMatchObject({ status: 409, code: 'header-mismatch' });
		expect(err.details.mismatches).toEqual([`the file names lot PT-25-009, not ${lot.internalLot} / ${lot.supplierLot}`, 'the file names container C02, not C01']);
		expect((await s.lots.get(lot.id)).scans).toHaveLength(0);
		const note = 'Instrument template not updated: the operator scanned container 1 of this lot (logbook p. 12)';
		const added = await s.scans.add(tech.actor, lot.id, { bytes: other, fileName: 'c1.jdx', container: 1, headerConfirmation: note });
		const [event] = await q<{ after: { scanId: number; headerConfirmation: { note: string; mismatches: string[] } } }>(
			"SELECT after FROM audit_events WHERE action = 'lot.scan-added' AND entity_id = :lot ORDER BY id DESC LIMIT 1",
			{ lot: String(lot.id) }
		);
		expect(event!.after.scanId).toBe(added.scanId);
		expect(event!.after.headerConfirmation.note).toBe(note);
		expect(event!.after.headerConfirmation.mismatches).toHaveLength(2);
		// A header naming this very lot and container needs nothing.
		const own = jcamp('genuine', fx.axis, seed++, `${fx.materialCode}, lot ${lot.supplierLot}, container 2`);
		await expect(s.scans.add(tech.actor, lot.id, { bytes: own, fileName: 'c2.jdx', container: 2 })).resolves.toMatchObject({ container: 2 });
	});
});

describe('forms that sign or record choose nothing for the user (issue 17 item 5)', () => {
	type Out = { status?: number; data?: { form?: { data: Record<string, unknown>; errors: Record<string, string[] | undefined> } } } | undefined;
	/** A page's load through the app's hooks, as the built server runs it; returns what the load returned. */
	async function load(mod: { load: (e: never) => unknown }, path: string, params: Record<string, string>, actor: Actor) {
		const { call } = await import('../support/http');
		let data: Record<string, unknown> = {};
		const res = await call(async (e) => ((data = (await mod.load(e as never)) as Record<string, unknown>), new Response(null)), new Request(`http://127.0.0.1${path}`), params, actor);
		expect(res.status).toBe(200);
		return data;
	}
	/** A named form action posted with these fields; returns the action's answer (a failure carries status and data). */
	async function post(mod: { actions: Record<string, (e: never) => unknown> }, name: string, path: string, params: Record<string, string>, actor: Actor, fields: Record<string, string>) {
		const { call } = await import('../support/http');
		const body = new FormData();
		for (const [k, v] of Object.entries(fields)) body.set(k, v);
		let out: Out;
		await call(async (e) => ((out = (await mod.actions[name](e as never)) as Out), new Response(null, { status: out?.status ?? 200 })), new Request(`http://127.0.0.1${path}?/${name}`, { method: 'POST', body }), params, actor);
		return out;
	}
	const formOf = (data: Record<string, unknown>, key: string) => (data[key] as { data: Record<string, unknown> }).data;

	it('the supplier status request starts with no status and the co-signature with no meaning; missing ones are refused by name', async () => {
		const page = await import('../../src/routes/(app)/suppliers/[code]/+page.server');
		const supplierStatus = await import('../../src/lib/server/services/supplier-status');
		const buyer = await makeUser(['procurement']);
		const suppliers = await import('../../src/lib/server/services/suppliers');
		const code = unique('SS').toUpperCase();
		await suppliers.create(buyer.actor, { code, name: 'Status choice test', status: 'qualified' });
		const path = `/suppliers/${code}`;
		expect(formOf(await load(page, path, { code }, buyer.actor), 'requestForm').status).toBe('');
		const noStatus = await post(page, 'requestStatus', path, { code }, buyer.actor, { reason: 'Late certificates twice this quarter' });
		expect(noStatus?.status).toBe(400);
		expect(noStatus?.data?.form?.errors.status?.[0]).toBe('Choose the new status: qualified, on watch or blocked');
		expect(await supplierStatus.forSupplier((await suppliers.get(code)).id)).toHaveLength(0);

		const r = await supplierStatus.request(buyer.actor, code, { status: 'on-watch', reason: 'Late certificates twice this quarter' });
		const qaView = await load(page, path, { code }, qa1.actor);
		expect(formOf(qaView, 'approveForm').meaning).toBe('');
		const noMeaning = await post(page, 'approveStatus', path, { code }, qa1.actor, { requestId: String(r.id), reason: 'Agree until the CAPA closes', password: qa1.password });
		expect(noMeaning?.status).toBe(400);
		expect(noMeaning?.data?.form?.errors.meaning?.[0]).toBe('Choose the meaning of your signature');
		expect((await suppliers.get(code)).status).toBe('qualified');
	}, 120_000);

	it('model approval starts with no meaning and is refused without one', async () => {
		const page = await import('../../src/routes/(app)/materials/[code]/versions/[version]/approve/+page.server');
		const params = { code: fx.materialCode, version: '1' };
		const path = `/materials/${fx.materialCode}/versions/1/approve`;
		expect(formOf(await load(page, path, params, qa1.actor), 'form').meaning).toBe('');
		const out = await post(page, 'default', path, params, qa1.actor, { reason: 'Validated on the challenge set', password: qa1.password });
		expect(out?.status).toBe(400);
		expect(out?.data?.form?.errors.meaning?.[0]).toBe('Choose the meaning of your signature');
	});

	it('a new class starts with no kind and is refused without one', async () => {
		const page = await import('../../src/routes/(app)/materials/[code]/+page.server');
		const chemist = await makeUser(['chemometrician']);
		const params = { code: fx.materialCode };
		const path = `/materials/${fx.materialCode}`;
		expect(formOf(await load(page, path, params, chemist.actor), 'classForm').kind).toBe('');
		const out = await post(page, 'addClass', path, params, chemist.actor, { name: 'talc-cut', description: 'cut with talc' });
		expect(out?.status).toBe(400);
		expect((out?.data as unknown as { classForm: { errors: Record<string, string[]> } }).classForm.errors.kind?.[0]).toBe('Choose the kind: genuine or suspect profile');
		const materials = await import('../../src/lib/server/services/materials');
		expect((await materials.classes(fx.materialId)).map((c) => c.name)).not.toContain('talc-cut');
	});

	it('an invalidation decision without a meaning is refused naming the field (400, not a server error)', async () => {
		const invalidations = await import('../../src/lib/server/services/invalidations');
		const lot = await failedLot();
		const failing = lot.scans.find((x) => x.verdict !== 'genuine')!;
		const chemist = await makeUser(['chemometrician']);
		await invalidations.propose(chemist.actor, lot.id, failing.id, { cause: 'sample-presentation', description: 'probe window not in contact with the powder' });
		await expect(invalidations.decide(qa1.actor, lot.id, failing.id, 'approve', { meaning: '', reason: 'lab log confirms it', password: qa1.password })).rejects.toMatchObject({
			status: 400,
			field: 'meaning',
			message: 'Choose what the signature means'
		});
		await expect(invalidations.decide(qa1.actor, lot.id, failing.id, 'approve', { meaning: 'invalidation approved: assignable laboratory cause', reason: '', password: qa1.password })).rejects.toMatchObject({ status: 400, field: 'reason' });
		expect((await s.lots.get(lot.id)).identity).toBe('fails');
	});
});

describe('the approval service names a missing meaning', () => {
	it('refuses an approval with no meaning, asking the signer to choose it', async () => {
		const versions = await import('../../src/lib/server/services/model-versions');
		await expect(versions.approve(qa1.actor, fx.versionId, { password: qa1.password, reason: 'fine', meaning: '' as never })).rejects.toMatchObject({
			issues: [expect.objectContaining({ path: ['meaning'], message: 'Choose the meaning of your signature ("approved for screening")' })]
		});
	});
});

describe('exclusions that stick: "Build a version" starts from the current version (issue 17 item 4)', () => {
	// Shared with the approval page test below (issue 17 item 6).
	const built = { code: '', v1: 0, v3: 0, outlier: 0, other: 0 };
	it('keeps every exclusion, applies the pending marks, and re-includes only on an explicit act with a reason', async () => {
		const versions = await import('../../src/lib/server/services/model-versions');
		const materials = await import('../../src/lib/server/services/materials');
		const { insertLibrary, standardRows } = await import('../support/library-fixtures');
		const { call, jsonRequest } = await import('../support/http');
		const chemist = await makeUser(['chemometrician']);
		const code = unique('BV').toUpperCase();
		const m = await materials.create(rootActor, { code, name: `Build basis ${code}`, technique: 'NIR' });
		await materials.addClass(rootActor, m.id, { name: 'genuine', kind: 'genuine', description: 'real' });
		await materials.addClass(rootActor, m.id, { name: 'diluted', kind: 'suspect', description: 'diluted' });
		await materials.addClass(rootActor, m.id, { name: 'substituted', kind: 'suspect', description: 'other grade' });
		const ids = await insertLibrary(m.id, standardRows(14), 5151);
		const [outlier, other] = ids; // the first two rows are genuine training spectra
		const build = async (input: Record<string, unknown>, options: Parameters<typeof versions.createBuild>[3] = {}) =>
			versions.get((await versions.createBuild(chemist.actor, m.id, { recipe: 'snv,center', folds: 5, ...input }, { inline: true, ...options })).id);
		const excludedOf = async (id: number) => (await versions.memberships(id)).filter((x) => !x.included).map((x) => [x.entryId, x.category, x.reason]);

		const v1 = await build({});
		await versions.markExclusion(chemist.actor, v1.id, { entryIds: [outlier], category: 'statistical-outlier', reason: 'c/c_crit 4.1 in every fold' });
		const v2 = await versions.get((await versions.rebuild(chemist.actor, v1.id, {}, { inline: true })).id);
		expect(v2.figures?.excludedCount).toBe(1);

		// The walk-through's defect: a new build from the form put the outlier back (n 119 → 120) with an empty reason.
		await versions.markExclusion(chemist.actor, v2.id, { entryIds: [other], category: 'sample-preparation', reason: 'vial not tapped down' });
		const v3 = await build({ alpha: 0.025 });
		expect(v3.state, v3.error ?? '').toBe('draft');
		expect(v3.parentId).toBe(v2.id);
		expect(await excludedOf(v3.id)).toEqual([
			[outlier, 'statistical-outlier', 'c/c_crit 4.1 in every fold'],
			[other, 'sample-preparation', 'vial not tapped down']
		]);
		expect(v3.figures?.trainingCount).toBe(v2.figures!.trainingCount - 1);
		expect((await versions.get(v2.id)).pending).toEqual({ exclude: [], include: [] });
		const d23 = await versions.diff(v2.id, v3.id);
		expect(d23.training.reincluded).toEqual([]);
		expect(d23.training.excluded.map((e) => [e.entryId, e.reason])).toEqual([[other, 'vial not tapped down']]);
		expect(d23.params).toEqual([{ name: 'alpha', from: 0.05, to: 0.025 }]);

		// Re-inclusion needs a reason, and only an excluded spectrum can come back.
		await expect(build({}, { reinclude: [{ entryId: outlier, reason: '' }] })).rejects.toMatchObject({ status: 400, field: 'reincludeReason' });
		await expect(build({}, { reinclude: [{ entryId: ids[2], reason: 'it was never excluded' }] })).rejects.toMatchObject({ status: 400, field: 'reinclude', message: expect.stringContaining(`not excluded in ${code} v3`) });
		const v4 = await build({}, { reinclude: [{ entryId: outlier, reason: 're-measured: the first scan had the lid on' }] });
		expect(await excludedOf(v4.id)).toEqual([[other, 'sample-preparation', 'vial not tapped down']]);
		expect((await versions.diff(v3.id, v4.id)).training.reincluded).toMatchObject([{ entryId: outlier, reason: 're-measured: the first scan had the lid on', previousReason: 'c/c_crit 4.1 in every fold' }]);

		// The same through the API, and the build page shows what stays excluded.
		const api = await import('../../src/routes/api/v1/materials/[id]/models/+server');
		const res = await call(api.POST, jsonRequest('POST', `/api/v1/materials/${code}/models`, { recipe: 'snv,center', folds: 5, reinclude: [{ entryId: other }] }), { id: code }, chemist.actor);
		expect(res.status).toBe(400);
		expect(((await res.json()) as { error: { field: string } }).error.field).toBe('reincludeReason');
		const queued = await call(api.POST, jsonRequest('POST', `/api/v1/materials/${code}/models`, { recipe: 'snv,center', folds: 5 }), { id: code }, chemist.actor);
		expect(queued.status).toBe(201);
		expect(await excludedOf(((await queued.json()) as { id: number }).id)).toEqual([[other, 'sample-preparation', 'vial not tapped down']]);
		Object.assign(built, { code, v1: v1.id, v3: v3.id, outlier, other });
	}, 240_000);

	it('the approval page shows, above the signature, the change against the approved version, the version it retires and the warnings (item 6)', async () => {
		expect(built.v3).toBeGreaterThan(0);
		const versions = await import('../../src/lib/server/services/model-versions');
		const chemist = (await versions.get(built.v1)).builtBy;
		expect(chemist.id).not.toBe(qa1.user.id);
		await versions.approve(qa1.actor, built.v1, { password: qa1.password, meaning: versions.APPROVAL_MEANING, reason: 'challenge set rejected' });
		const page = await import('../../src/routes/(app)/materials/[code]/versions/[version]/approve/+page.server');
		const { call } = await import('../support/http');
		let data: { summary: Awaited<ReturnType<typeof versions.approvalView>> } | undefined;
		const res = await call(async (e) => ((data = (await page.load(e as never)) as never), new Response(null)), new Request(`http://127.0.0.1/materials/${built.code}/versions/3/approve`), { code: built.code, version: '3' }, qa2.actor);
		expect(res.status).toBe(200);
		const a = data!.summary;
		expect(a.retires).toEqual({ label: `${built.code} v1`, version: 1 });
		expect(a.against).toEqual({ label: `${built.code} v1`, version: 1, basis: 'approved' });
		expect(a.excluded).toEqual([
			expect.objectContaining({ entryId: built.outlier, category: 'Statistical outlier at γ', reason: 'c/c_crit 4.1 in every fold', isNew: true }),
			expect.objectContaining({ entryId: built.other, category: 'Sample preparation', reason: 'vial not tapped down', isNew: true })
		]);
		expect(a.params).toEqual([{ name: 'alpha', label: 'α, class models (type-I error)', from: '0.05', to: '0.025' }]);
		const genuine = a.models.find((m) => m.name === 'genuine')!;
		expect(genuine.nTo).toBe(genuine.nFrom! - 2);

		// The warnings come from the version's own figures: an engine guard and a false-reject rate above 2α.
		const { sequelize } = await import('../../src/lib/server/db');
		const capWarning = 'class "genuine": the suggested component count equals the cap (9): PRESS still falls there';
		await sequelize().query(
			`UPDATE model_versions SET figures = jsonb_set(jsonb_set(figures, '{models,1,warnings}', CAST(:w AS jsonb)), '{models,1,cvFalseRejectRate}', CAST(:r AS jsonb)) WHERE id = :id AND figures->'models'->1->>'name' = 'genuine'`,
			{ replacements: { id: built.v3, w: JSON.stringify([capWarning]), r: String(4 / genuine.nTo) } }
		);
		const warned = await versions.approvalView(built.v3);
		expect(warned.warnings.filter((w) => w.model === 'genuine').map((w) => [w.kind, w.text.slice(0, 40)])).toEqual([
			['components-at-cap', capWarning.slice(0, 40)],
			['high-false-reject-rate', `cross-validated false-reject rate ${((4 / genuine.nTo) * 100).toFixed(1)} %`]
		]);
	}, 120_000);
});

describe('alerts stay current (issue 17 item 7)', () => {
	it('shows each finding as it stands after rescans and an invalidation, and the lot’s disposition in force', async () => {
		const alerts = await import('../../src/lib/server/services/alerts');
		const invalidations = await import('../../src/lib/server/services/invalidations');
		const lot = await failedLot();
		const failing = lot.scans.find((x) => x.verdict !== 'genuine')!;
		const [opened] = (await alerts.list({ lot: lot.id })).rows;
		expect(opened.current.findings).toEqual([{ scanId: failing.id, container: 2, scan: 'counts', later: [], result: 'suspect', profile: 'diluted-starch', decided: true }]);
		expect(opened.current.lot).toMatchObject({ status: 'screened', identity: 'fails' });
		expect(opened.current.disposition).toBeNull();

		// A rescan alone does not replace a failing result (docs/methods.md §16): the alert says so.
		const title = `${fx.materialCode}, lot ${lot.supplierLot}, container 2`;
		const rescan = await s.scans.add(tech.actor, lot.id, { bytes: jcamp('genuine', fx.axis, seed++, title), fileName: 'c2-retest.jdx', container: 2 });
		let now = (await alerts.get(opened.id)).current;
		expect(now.findings[0]).toMatchObject({ scan: 'counts', later: [{ scanId: rescan.scanId, verdict: 'genuine', profile: null }], result: 'suspect' });

		// QA approves the invalidation of the failing scan: the container is genuine now, the lot meets identity.
		const chemist = await makeUser(['chemometrician']);
		await invalidations.propose(chemist.actor, lot.id, failing.id, { cause: 'sample-presentation', description: 'probe window not in contact with the powder' });
		now = (await alerts.get(opened.id)).current;
		expect(now.findings[0].scan).toBe('invalidation-proposed');
		await invalidations.decide(qa1.actor, lot.id, failing.id, 'approve', { meaning: 'invalidation approved: assignable laboratory cause', reason: 'lab log confirms it', password: qa1.password });
		now = (await alerts.get(opened.id)).current;
		expect(now.findings[0]).toMatchObject({ scan: 'invalidated', result: 'genuine', decided: true });
		expect(now.lot).toMatchObject({ identity: 'meets', identityText: 'meets identity' });

		// The release needs two QA signatures (the container once failed): pending first, then in force.
		const first = await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign(qa1, 'invalidated on an assignable cause; retest genuine') });
		now = (await alerts.get(opened.id)).current;
		expect(now.disposition).toBeNull();
		expect(now.pending).toMatchObject({ id: first.disposition.id, decision: 'release', signedBy: qa1.user.name });
		await s.dispositions.cosign(qa2.actor, first.disposition.id, { meaning: 'approved as second QA manager', reason: 'reviewed the invalidation', password: qa2.password });
		const [listed] = (await alerts.list({ lot: lot.id })).rows;
		expect(listed.current.pending).toBeNull();
		expect(listed.current.disposition).toMatchObject({ decision: 'release', decisionText: 'released', signedBy: [qa1.user.name, qa2.user.name] });
		expect(listed.current.lot).toMatchObject({ status: 'released', statusText: 'released' });
		// The alert's own record is unchanged: it still shows what was screened then.
		expect(listed.findings).toMatchObject([{ scanId: failing.id, verdict: 'suspect' }]);
	});
});
