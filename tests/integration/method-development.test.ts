// Method development end to end on synthetic fixtures: build (job code run inline and through the API contract),
// exclusions with reasons, one-step rebuild, diff, approval rules, retirement, and the artefact screening like the CLI.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseArtefact, screen } from '../../src/lib/analysis';
import * as materials from '../../src/lib/server/services/materials';
import * as versions from '../../src/lib/server/services/model-versions';
import * as audit from '../../src/lib/server/services/audit';
import { makeUser, rootActor, unique } from '../support/factories';
import { axis, csvMatrix, insertLibrary, rng, spectrum, standardRows } from '../support/library-fixtures';
import * as library from '../../src/lib/server/services/library';
import { sequelize } from '../../src/lib/server/db';

// Fixed seeds: the same spectra on every run, so whether a version meets the acceptance criteria is reproducible.
let nextSeed = 4242;
async function materialWithLibrary(perClass = 14) {
	const code = unique('MD').toUpperCase();
	const m = await materials.create(rootActor, { code, name: `Method test ${code}`, technique: 'NIR' });
	await materials.addClass(rootActor, m.id, { name: 'genuine', kind: 'genuine', description: 'real' });
	await materials.addClass(rootActor, m.id, { name: 'diluted', kind: 'suspect', description: 'diluted' });
	await materials.addClass(rootActor, m.id, { name: 'substituted', kind: 'suspect', description: 'other grade' });
	const ids = await insertLibrary(m.id, standardRows(perClass), nextSeed++);
	return { material: m, ids };
}

describe('model versions', () => {
	it('refuses a class with too few training spectra, naming the class and the rule', async () => {
		const chemist = await makeUser(['chemometrician']);
		const { material } = await materialWithLibrary(8);
		await expect(versions.createBuild(chemist.actor, material.id, {}, { inline: true })).rejects.toMatchObject({ status: 400, message: expect.stringMatching(/class genuine has 8 .*at least 10/) });
		await expect(versions.createBuild(chemist.actor, material.id, { components: 12 }, { inline: true })).rejects.toMatchObject({ message: expect.stringMatching(/at least 15/) });
	});

	it('builds a draft with artefact, memberships, figures and validation; exclusion + rebuild; diff; approval rules', async () => {
		const chemist = await makeUser(['chemometrician']);
		const qa = await makeUser(['qa']);
		const qaChemist = await makeUser(['qa', 'chemometrician']);
		const { material, ids } = await materialWithLibrary();

		const first = await versions.createBuild(chemist.actor, material.id, { recipe: 'snv,center', folds: 5 }, { inline: true });
		const v1 = await versions.get(first.id);
		expect(v1.state, v1.error ?? '').toBe('draft');
		expect(v1.artefactSha256).toMatch(/^[0-9a-f]{64}$/);
		expect(v1.figures?.models.map((m) => m.name)).toEqual(['family', 'genuine', 'diluted', 'substituted']);
		expect(v1.validation?.report?.confusion).toHaveLength(3);
		expect(v1.validation?.report?.confusion[0]).toHaveLength(5);
		const genuineTests = v1.validation!.verdicts.filter((t) => t.label === 'genuine');
		expect(genuineTests.filter((t) => t.verdict === 'genuine').length).toBeGreaterThanOrEqual(3);
		expect(v1.validation!.verdicts.filter((t) => t.label === 'talc-cut').every((t) => t.verdict !== 'genuine')).toBe(true);

		// Exclusion needs a category and a reason, and only touches training spectra.
		const trainingIds = ids.slice(0, 2);
		await expect(versions.markExclusion(chemist.actor, v1.id, { entryIds: trainingIds, category: 'other', reason: '' })).rejects.toThrow();
		await versions.markExclusion(chemist.actor, v1.id, { entryIds: trainingIds, category: 'sample-preparation', reason: 'vial not tapped down' });
		const rebuilt = await versions.rebuild(chemist.actor, v1.id, {}, { inline: true });
		const v2 = await versions.get(rebuilt.id);
		expect(v2.state, v2.error ?? '').toBe('draft');
		expect(v2.parentId).toBe(v1.id);
		expect(v2.params.recipe).toBe(v1.params.recipe);
		expect(v2.figures?.excludedCount).toBe(2);
		expect((await versions.get(v1.id)).pending.exclude).toHaveLength(0);

		const d = await versions.diff(v1.id, v2.id);
		expect(d.params).toEqual([]);
		expect(d.training.excluded.map((e) => [e.entryId, e.category, e.reason])).toEqual(trainingIds.map((id) => [id, 'sample-preparation', 'vial not tapped down']));

		// Re-inclusion with a reason comes back in the next rebuild and the diff.
		await versions.markInclusion(chemist.actor, v2.id, { entryIds: [trainingIds[0]], reason: 're-measured: the first scan was fine' });
		const v3 = await versions.get((await versions.rebuild(chemist.actor, v2.id, { alpha: 0.025 }, { inline: true })).id);
		const d23 = await versions.diff(v2.id, v3.id);
		expect(d23.training.reincluded).toMatchObject([{ entryId: trainingIds[0], reason: 're-measured: the first scan was fine', previousReason: 'vial not tapped down' }]);
		expect(d23.params).toEqual([{ name: 'alpha', from: 0.05, to: 0.025 }]);

		// Approval: QA only, never the builder, wrong password refused, previous approved version retired.
		await expect(versions.approve(chemist.actor, v1.id, { password: chemist.password, meaning: versions.APPROVAL_MEANING, reason: 'ok' })).rejects.toMatchObject({ status: 403 });
		const mine = await versions.get((await versions.createBuild(qaChemist.actor, material.id, { recipe: 'snv,center', folds: 5 }, { inline: true })).id);
		await expect(versions.approve(qaChemist.actor, mine.id, { password: qaChemist.password, meaning: versions.APPROVAL_MEANING, reason: 'my own' })).rejects.toMatchObject({ status: 403, message: expect.stringMatching(/You built this version/) });
		await expect(versions.approve(qa.actor, v1.id, { password: 'wrong-password!', meaning: versions.APPROVAL_MEANING, reason: 'validated' })).rejects.toMatchObject({ status: 401 });
		await expect(versions.approve(qa.actor, v1.id, { password: qa.password, meaning: 'reviewed' as never, reason: 'validated' })).rejects.toThrow();
		const ok1 = await versions.approve(qa.actor, v1.id, { password: qa.password, meaning: versions.APPROVAL_MEANING, reason: 'challenge set passed' });
		expect(ok1.manifestation).toMatchObject({ signerName: qa.user.name, meaning: 'approved for screening', reason: 'challenge set passed' });
		expect(ok1.manifestation.signedAt).toMatch(/T.*Z$/);
		expect((await versions.approvedFor(material.id))?.versionId).toBe(v1.id);
		const ok2 = await versions.approve(qa.actor, v2.id, { password: qa.password, meaning: versions.APPROVAL_MEANING, reason: 'outliers removed' });
		expect(ok2.retired).toEqual([{ id: v1.id, version: v1.version }]);
		expect((await versions.get(v1.id)).state).toBe('retired');
		expect((await versions.get(v2.id)).state).toBe('approved');
		expect((await versions.approvedFor(material.id))?.versionId).toBe(v2.id);
		await expect(versions.approve(qa.actor, v1.id, { password: qa.password, meaning: versions.APPROVAL_MEANING, reason: 'again' })).rejects.toMatchObject({ status: 409 });

		const events = await audit.list({ entity: 'model_version', pageSize: 500 });
		const actions = new Set(events.rows.filter((e) => [v1.id, v2.id].map(String).includes(e.entityId ?? '')).map((e) => e.action));
		for (const a of ['model.build-requested', 'model.built', 'model.exclusion-marked', 'model.approved', 'model.retired', 'signature.applied']) expect(actions).toContain(a);
		expect((await audit.verifyChain()).ok).toBe(true);

		// The artefact text screens identically through the command line and in process.
		const { text, sha256 } = await versions.artefactText(v2.id);
		expect(sha256).toBe(v2.artefactSha256);
		const dir = mkdtempSync(join(tmpdir(), 'lotgate-md-'));
		writeFileSync(join(dir, 'model.json'), text);
		const x = axis();
		const random = rng(99);
		const samples = (['genuine', 'diluted', 'alien'] as const).map((k, i) => ({ id: `Q${i}`, values: spectrum(k, x, random) }));
		writeFileSync(join(dir, 'input.csv'), [['id', ...x.map((v) => v.toFixed(3))].join(','), ...samples.map((s) => [s.id, ...s.values.map((v) => v.toFixed(6))].join(','))].join('\n') + '\n');
		const cli = spawnSync(process.execPath, ['bin/lotgate.js', 'screen', '--model', join(dir, 'model.json'), '--input', join(dir, 'input.csv'), '--json'], { encoding: 'utf8', timeout: 60_000 });
		expect(cli.status, cli.stderr).toBe(0);
		const out = JSON.parse(cli.stdout) as { results: { id: string; verdict: string; profile: string | null; family: { c: number } }[] };
		const artefact = parseArtefact(text);
		const roundX = x.map((v) => Number(v.toFixed(3)));
		for (const s of samples) {
			const inProcess = screen(artefact, { id: s.id, axis: roundX, values: s.values.map((v) => Number(v.toFixed(6))), unit: 'nm' });
			const fromCli = out.results.find((r) => r.id === s.id)!;
			expect(fromCli.verdict).toBe(inProcess.verdict);
			expect(fromCli.profile).toBe(inProcess.profile);
			expect(fromCli.family.c).toBeCloseTo(inProcess.family!.c, 9);
		}
	});

	it('a failed build records the reason', async () => {
		const chemist = await makeUser(['chemometrician']);
		const { material } = await materialWithLibrary();
		// range outside the data passes the recipe parser but not the common-axis check
		await expect(versions.createBuild(chemist.actor, material.id, { recipe: 'range(900,1000),center' }, { inline: true })).rejects.toMatchObject({ message: expect.stringMatching(/outside the range/) });
		// A version the engine must refuse, as if its parameters had been stored before the pre-checks existed: the job
		// body records the engine's reason and the failure in the audit trail (it never throws).
		const built = await versions.createBuild(chemist.actor, material.id, { recipe: 'center', folds: 2 }, { inline: true });
		await sequelize().query(`UPDATE model_versions SET state = 'building', params = jsonb_set(params, '{recipe}', '"range(100,200),center"') WHERE id = :id`, { replacements: { id: built.id } });
		await versions.runBuild(built.id);
		const v = await versions.get(built.id);
		expect(v.state).toBe('failed');
		expect(v.error).toMatch(/range/i);
		expect(v.progress.stage).toBe('failed');
		const events = await audit.list({ entity: 'model_version', action: 'model.build-failed', pageSize: 500 });
		expect(events.rows.find((e) => String(e.entityId) === String(built.id))).toMatchObject({ after: { error: v.error } });
	});
});

describe('validation report PDF', () => {
	it('renders with the shipped fonts', async () => {
		const chemist = await makeUser(['chemometrician']);
		const { material } = await materialWithLibrary();
		const v = await versions.get((await versions.createBuild(chemist.actor, material.id, { recipe: 'snv,center', folds: 4 }, { inline: true })).id);
		const { validationPdf } = await import('../../src/lib/server/reports/validation-pdf');
		const pdf = await validationPdf(v);
		expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
		expect(pdf.length).toBeGreaterThan(5000);
	});
});

describe('reference library upload', () => {
	it('stores a labelled CSV matrix in one transaction, filters on the server, and refuses bad rows and duplicates whole', async () => {
		const chemist = await makeUser(['chemometrician']);
		const code = unique('LIB').toUpperCase();
		const m = await materials.create(rootActor, { code, name: 'Library test', technique: 'NIR' });
		for (const [name, kind] of [['genuine', 'genuine'], ['diluted', 'suspect'], ['substituted', 'suspect']] as const) await materials.addClass(rootActor, m.id, { name, kind, description: name });
		const rows = standardRows(12, 3);
		const csv = new TextEncoder().encode(csvMatrix(rows, 5, 120));
		const added = await library.addFiles(chemist.actor, m.id, [{ name: 'library.csv', bytes: csv }], { classColumn: 'class' });
		expect(added.added).toBe(rows.length);
		expect(added.byRoleAndLabel['challenge:talc-cut']).toBe(3);
		const page = await library.list(m.id, { role: 'training', label: 'diluted', sort: 'id:desc', pageSize: 5 });
		expect(page.total).toBe(12);
		expect(page.rows).toHaveLength(5);
		expect(page.rows[0].id).toBeGreaterThan(page.rows[4].id);

		const count = async () => Number((await sequelize().query<{ n: string }>('SELECT count(*) AS n FROM library_entries WHERE material_id = :id', { replacements: { id: m.id }, type: 'SELECT' as never }))[0].n);
		const before = await count();
		await expect(library.addFiles(chemist.actor, m.id, [{ name: 'library.csv', bytes: csv }])).rejects.toMatchObject({ status: 409 });
		const bad = csvMatrix([{ label: 'genuine', kind: 'genuine', role: 'training', lot: 'X' }, { label: 'no-such-class', kind: 'genuine', role: 'training', lot: 'X' }], 77, 120);
		await expect(library.addFiles(chemist.actor, m.id, [{ name: 'bad.csv', bytes: new TextEncoder().encode(bad) }])).rejects.toMatchObject({ status: 400, message: expect.stringMatching(/bad\.csv, row 3: class "no-such-class" is not a class/) });
		expect(await count()).toBe(before);
		const tech = await makeUser(['technician']);
		await expect(library.addFiles(tech.actor, m.id, [{ name: 'x.csv', bytes: csv }])).rejects.toMatchObject({ status: 403 });

		// And the library builds through the same service the API calls.
		const v = await versions.get((await versions.createBuild(chemist.actor, m.id, { recipe: 'snv,center', folds: 4 }, { inline: true })).id);
		expect(v.state, v.error ?? '').toBe('draft');
		expect(v.validation?.challengeCount).toBe(3);
	});
});
