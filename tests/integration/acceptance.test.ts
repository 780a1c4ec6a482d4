// Issue 12 §1: approval needs evidence. A version without test and challenge spectra is refused with the list of
// unmet criteria; with a proper validation set it is approved and gets a review-by date. Criteria are proposed by a
// chemometrician and decided by another QA user with a signature.
import { describe, expect, it } from 'vitest';
import * as materials from '../../src/lib/server/services/materials';
import * as versions from '../../src/lib/server/services/model-versions';
import * as acceptance from '../../src/lib/server/services/acceptance';
import * as audit from '../../src/lib/server/services/audit';
import { makeUser, rootActor, unique } from '../support/factories';
import { insertLibrary, standardRows } from '../support/library-fixtures';

async function material() {
	const code = unique('AC').toUpperCase();
	const m = await materials.create(rootActor, { code, name: `Acceptance test ${code}`, technique: 'NIR' });
	await materials.addClass(rootActor, m.id, { name: 'genuine', kind: 'genuine' });
	await materials.addClass(rootActor, m.id, { name: 'diluted', kind: 'suspect' });
	await materials.addClass(rootActor, m.id, { name: 'substituted', kind: 'suspect' });
	return m;
}

const sign = (password: string, reason = 'validation reviewed') => ({ password, meaning: versions.APPROVAL_MEANING, reason }) as const;

describe('the approval gate', () => {
	it('refuses a version without test and challenge spectra with a 409 listing every unmet criterion, then approves one with a proper validation set', async () => {
		const chemist = await makeUser(['chemometrician']);
		const qa = await makeUser(['qa']);
		const m = await material();
		const rows = standardRows(14);
		// the same seed gives the same spectra: first only the training rows, later the held-out rows as well
		await insertLibrary(m.id, rows.filter((r) => r.role === 'training'), 4243);
		const bare = await versions.get((await versions.createBuild(chemist.actor, m.id, { recipe: 'snv,center', folds: 5 }, { inline: true })).id);
		expect(bare.state, bare.error ?? '').toBe('draft');
		const refusal = versions.approve(qa.actor, bare.id, sign(qa.password));
		await expect(refusal).rejects.toMatchObject({ status: 409, code: 'acceptance-unmet' });
		const message = await refusal.catch((e: Error) => e.message);
		expect(message).toMatch(/cannot be approved: it does not meet the default acceptance criteria/);
		for (const part of [
			'at least 10 test spectra of the genuine class from at least 3 supplier lots not in training: 0 spectra',
			'at least 5 test or challenge spectra of suspect profile "diluted": 0 spectra',
			'at least 5 test or challenge spectra of suspect profile "substituted": 0 spectra',
			'at least 5 challenge spectra of other materials or unseen adulterants: 0 spectra',
			'verdict-level specificity of genuine at least 100.0 %',
			'verdict-level sensitivity of genuine at least 90.0 %'
		])
			expect(message).toContain(part);
		expect((await versions.get(bare.id)).state).toBe('draft');

		// the held-out spectra: 12 genuine from 4 new lots, 5 per suspect profile, 5 talc challenges
		await insertLibrary(m.id, rows.filter((r) => r.role !== 'training'), 9243);
		const full = await versions.get((await versions.rebuild(chemist.actor, bare.id, {}, { inline: true, note: 'validation set added' })).id);
		const evaluation = await acceptance.evaluateVersion(full.id);
		expect(evaluation.unmet).toEqual([]);
		const ok = await versions.approve(qa.actor, full.id, sign(qa.password));
		expect(ok.manifestation.meaning).toBe('approved for screening');
		const approved = await versions.get(full.id);
		expect(approved.acceptance?.met).toBe(true);
		const signed = new Date(ok.manifestation.signedAt);
		const expected = new Date(Date.UTC(signed.getUTCFullYear() + 1, signed.getUTCMonth(), signed.getUTCDate())).toISOString().slice(0, 10);
		expect(approved.reviewBy).toBe(expected);
		// verdict-level and class-model-level metrics are both in the report
		expect(approved.validation?.report?.verdictLevel.map((v) => v.className)).toEqual(approved.validation?.report?.perClass.map((c) => c.className));
	});
});

describe('acceptance criteria per material', () => {
	it('proposed by a chemometrician, decided by another QA user with a signature; the approved revision applies', async () => {
		const chemist = await makeUser(['chemometrician']);
		const qaChemist = await makeUser(['qa', 'chemometrician']);
		const qa = await makeUser(['qa']);
		const tech = await makeUser(['technician']);
		const m = await material();
		expect((await acceptance.effective(m.id)).revision).toBeNull();
		await expect(acceptance.propose(tech.actor, m.code, { sensitivityMin: 0.95, reason: 'tighter' })).rejects.toMatchObject({ status: 403 });
		await expect(acceptance.propose(chemist.actor, m.code, { sensitivityMin: 0.3, reason: 'looser' })).rejects.toMatchObject({ status: 400, message: expect.stringMatching(/sensitivityMin must be between 0.5 and 1/) });
		const p = await acceptance.propose(qaChemist.actor, m.code, { sensitivityMin: 0.95, genuineTestMin: 20, reason: 'high-risk material: tighter evidence' });
		expect(p).toMatchObject({ revision: 1, state: 'proposed', criteria: { sensitivityMin: 0.95, genuineTestMin: 20, challengeMin: 5 } });
		await expect(acceptance.propose(chemist.actor, m.code, { challengeMin: 8, reason: 'another' })).rejects.toMatchObject({ status: 409 });
		await expect(acceptance.decide(qaChemist.actor, m.code, p.id, true, { password: qaChemist.password, meaning: acceptance.CRITERIA_MEANING, reason: 'mine' })).rejects.toMatchObject({ status: 403 });
		await expect(acceptance.decide(chemist.actor, m.code, p.id, true, { password: chemist.password, meaning: acceptance.CRITERIA_MEANING, reason: 'not qa' })).rejects.toMatchObject({ status: 403 });
		await expect(acceptance.decide(qa.actor, m.code, p.id, true, { password: 'wrong-password!', meaning: acceptance.CRITERIA_MEANING, reason: 'agreed' })).rejects.toMatchObject({ status: 401 });
		expect((await acceptance.effective(m.id)).revision).toBeNull();
		const d = await acceptance.decide(qa.actor, m.code, p.id, true, { password: qa.password, meaning: acceptance.CRITERIA_MEANING, reason: 'agreed with the risk assessment' });
		expect(d).toMatchObject({ revision: 1, state: 'approved', signature: { signerName: qa.user.name, meaning: 'acceptance criteria approved' } });
		const eff = await acceptance.effective(m.id);
		expect(eff).toMatchObject({ revision: 1, criteria: { sensitivityMin: 0.95, genuineTestMin: 20 }, approvedBy: qa.user.name });
		const events = await audit.list({ entity: 'material', pageSize: 200 });
		const mine = events.rows.filter((e) => e.entityId === String(m.id)).map((e) => e.action);
		expect(mine).toEqual(expect.arrayContaining(['acceptance.proposed', 'acceptance.approved']));
		// the criteria page offers the decision to QA users other than the proposer (by id, never by name)
		expect((await acceptance.list(m.code))[0]).toMatchObject({ revision: 1, state: 'approved', proposedById: qaChemist.user.id, proposedBy: qaChemist.user.name, decidedBy: qa.user.name });
	});
});
