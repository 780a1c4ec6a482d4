// The declared axis (issue 12 §3): a material's axis is declared (or taken from its first library upload), every
// upload is checked against it, a build uses it, never narrows it, and leaves out a short spectrum with the reason.
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { makeUser, unique } from '../support/factories';
import { axis as gridOf, rng, spectrum } from '../support/library-fixtures';

type Svc = {
	db: typeof import('../../src/lib/server/db/index');
	materials: typeof import('../../src/lib/server/services/materials');
	library: typeof import('../../src/lib/server/services/library');
	versions: typeof import('../../src/lib/server/services/model-versions');
};
let s: Svc;
let chemist: Awaited<ReturnType<typeof makeUser>>;
let tech: Awaited<ReturnType<typeof makeUser>>;

const csv = (x: number[], rows: { id: string; label: string; y: number[] }[]) =>
	new TextEncoder().encode(`id,class,role,${x.map((v) => v.toFixed(3)).join(',')}\n${rows.map((r) => `${r.id},${r.label},training,${r.y.map((v) => v.toFixed(6)).join(',')}`).join('\n')}\n`);

async function newMaterial(axis?: { unit: 'nm'; from: number; to: number; step?: number }) {
	const m = await s.materials.create(chemist.actor, { code: unique('AX').toUpperCase(), name: 'Declared axis material', technique: 'NIR', ...(axis ? { axis } : {}) });
	await s.materials.addClass(chemist.actor, m.id, { name: 'genuine', kind: 'genuine' });
	return m;
}

beforeAll(async () => {
	s = {
		db: await import('../../src/lib/server/db/index'),
		materials: await import('../../src/lib/server/services/materials'),
		library: await import('../../src/lib/server/services/library'),
		versions: await import('../../src/lib/server/services/model-versions')
	};
	chemist = await makeUser(['chemometrician']);
	tech = await makeUser(['technician']);
}, 60_000);

describe('declared axis', () => {
	it('a material created without an axis takes it from its first library upload, audited, and keeps it', async () => {
		const m = await newMaterial();
		expect(m.axis).toBeNull();
		const x = gridOf(200, 1100, 2294); // 1100..2294 every 6 nm
		const random = rng(11);
		const first = await s.library.addFiles(chemist.actor, m.id, [{ name: 'first.csv', bytes: csv(x, Array.from({ length: 3 }, (_, i) => ({ id: `a${i}`, label: 'genuine', y: spectrum('genuine', x, random) }))) }], { classColumn: 'class', roleColumn: 'role' });
		expect(first.axis).toMatchObject({ unit: 'nm', from: 1100, to: 2294, step: 6, source: 'first-upload' });
		const x2 = gridOf(100, 1000, 2485);
		await s.library.addFiles(chemist.actor, m.id, [{ name: 'second.csv', bytes: csv(x2, [{ id: 'b0', label: 'genuine', y: spectrum('genuine', x2, random) }]) }], { classColumn: 'class', roleColumn: 'role' });
		expect((await s.materials.get(m.id)).axis).toMatchObject({ from: 1100, to: 2294, step: 6 });
		const [ev] = await s.db.sequelize().query<{ n: string }>("SELECT count(*) AS n FROM audit_events WHERE action = 'material.axis-declared' AND entity_id = :id", { replacements: { id: String(m.id) }, type: QueryTypes.SELECT });
		expect(Number(ev.n)).toBe(1);
	});

	it('only a chemometrician changes it, with a reason; the change is audited with before and after', async () => {
		const m = await newMaterial({ unit: 'nm', from: 1100, to: 2300, step: 2 });
		await expect(s.materials.setAxis(tech.actor, m.id, { unit: 'nm', from: 1200, to: 2300 }, 'a good long reason')).rejects.toMatchObject({ status: 403 });
		await expect(s.materials.setAxis(chemist.actor, m.id, { unit: 'nm', from: 1200, to: 2300 }, 'short')).rejects.toMatchObject({ status: 400, field: 'reason' });
		await expect(s.materials.setAxis(chemist.actor, m.id, { unit: 'nm', from: 2300, to: 1200 }, 'reversed range on purpose')).rejects.toThrow(/end must be above its start/);
		const changed = await s.materials.setAxis(chemist.actor, m.id, { unit: 'nm', from: 1200, to: 2300, step: 4 }, 'new probe window agreed with QA');
		expect(changed.axis).toMatchObject({ from: 1200, to: 2300, step: 4, source: 'declared', reason: 'new probe window agreed with QA' });
	});

	it('a short library spectrum is named at upload, left out of the build with its reason, and the axis stays as declared', async () => {
		const m = await newMaterial({ unit: 'nm', from: 1100, to: 2498, step: 2 });
		const x = gridOf(700, 1100, 2498);
		const random = rng(12);
		const rows = Array.from({ length: 24 }, (_, i) => ({ id: `g${i}`, label: 'genuine', y: spectrum('genuine', x, random) }));
		await s.library.addFiles(chemist.actor, m.id, [{ name: 'full.csv', bytes: csv(x, rows) }], { classColumn: 'class', roleColumn: 'role' });
		const short = x.filter((v) => v >= 1300 && v <= 2400);
		const up = await s.library.addFiles(chemist.actor, m.id, [{ name: 'short.csv', bytes: csv(short, [{ id: 'short', label: 'genuine', y: spectrum('genuine', short, random) }]) }], { classColumn: 'class', roleColumn: 'role' });
		expect(up.outsideAxis).toHaveLength(1);
		expect(up.outsideAxis[0].reason).toMatch(/does not cover the declared axis 1100–2498 nm every 2: missing 1100–1300 and 2400–2498 nm/);
		const { id } = await s.versions.createBuild(chemist.actor, m.id, { recipe: 'center', components: 2, familyComponents: 2 }, { inline: true });
		const v = await s.versions.get(id);
		expect(v.state).toBe('draft');
		const artefact = JSON.parse((await s.versions.artefactText(id)).text) as { axis: { from: number; to: number; points: number }; family: { n: number } };
		expect(artefact.axis).toMatchObject({ from: 1100, to: 2498, points: 700 });
		expect(artefact.family.n).toBe(24);
		const figures = v.figures as unknown as { axis: { excluded: { entryId: number; reason: string }[] } };
		expect(figures.axis.excluded).toEqual([{ entryId: up.entries[0].id, reason: up.outsideAxis[0].reason }]);
	}, 120_000);

	it('a recipe with two windows builds on the declared axis without the gap; a window outside the axis is refused naming it', async () => {
		const m = await newMaterial({ unit: 'nm', from: 1100, to: 2498, step: 2 });
		const x = gridOf(700, 1100, 2498);
		const random = rng(13);
		await s.library.addFiles(chemist.actor, m.id, [{ name: 'full.csv', bytes: csv(x, Array.from({ length: 24 }, (_, i) => ({ id: `w${i}`, label: 'genuine', y: spectrum('genuine', x, random) }))) }], { classColumn: 'class', roleColumn: 'role' });
		await expect(s.versions.createBuild(chemist.actor, m.id, { recipe: 'range(1000,1800),range(1900,2498),snv,center', components: 2, familyComponents: 2 }, { inline: true })).rejects.toMatchObject({
			status: 400,
			message: expect.stringContaining('range(1000,1800) is outside the declared axis')
		});
		await expect(s.versions.createBuild(chemist.actor, m.id, { recipe: 'range(1100,1800),range(1700,2498),center', components: 2, familyComponents: 2 }, { inline: true })).rejects.toThrow(/windows range\(1100,1800\) and range\(1700,2498\) overlap/);
		const { id } = await s.versions.createBuild(chemist.actor, m.id, { recipe: 'range(1900,2498),range(1100,1800),snv,savgol(11,2,1),center', components: 2, familyComponents: 2 }, { inline: true });
		const v = await s.versions.get(id);
		expect(v.state, v.error ?? '').toBe('draft');
		const artefact = JSON.parse((await s.versions.artefactText(id)).text) as { recipe: string; axis: { x: number[]; from: number; to: number } };
		expect(artefact.recipe).toBe('range(1900,2498),range(1100,1800),snv,savgol(11,2,1),center');
		expect(artefact.axis).toMatchObject({ from: 1100, to: 2498 });
		expect(artefact.axis.x.length).toBe(x.filter((p) => p <= 1800 || p >= 1900).length);
		expect(artefact.axis.x.some((p) => p > 1800 && p < 1900)).toBe(false);
	}, 120_000);
});
