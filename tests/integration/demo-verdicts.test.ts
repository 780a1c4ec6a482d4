// The demo shows every verdict (issue 17, "The demo should show every verdict"): seed the demo as `npm start` does and
// read back what the seven demo lots' scans were given. Invented demo data: this checks the demo, not any method.
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';

let rows: { lot_key: string; container: number; verdict: string }[] = [];
let artefacts: { code: string; artefact: string | object }[] = [];
let treeVersion: { version: number; state: string; params: { tree?: unknown }; artefact: string | object } | undefined;

beforeAll(async () => {
	const { sequelize } = await import('../../src/lib/server/db/index');
	await (await import('../../src/lib/server/demo/seed')).seedDemo(() => {});
	const lots = (await import('../../src/lib/demo')).demoScenario().lots;
	const q = <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => sequelize().query<T>(sql, { replacements, type: QueryTypes.SELECT });
	for (const spec of lots) {
		const found = await q<{ container: number; verdict: string }>(
			`SELECT sc.container, sc.verdict FROM scans sc JOIN lots l ON l.id = sc.lot_id JOIN materials m ON m.id = l.material_id JOIN suppliers s ON s.id = l.supplier_id
			  WHERE m.code = :material AND s.code = :supplier AND l.supplier_lot = :supplierLot ORDER BY sc.container, sc.id`,
			{ material: spec.material, supplier: spec.supplier, supplierLot: spec.supplierLot }
		);
		rows.push(...found.map((r) => ({ lot_key: spec.lotKey, container: Number(r.container), verdict: r.verdict })));
	}
	// Other integration files share this database and create materials of their own: look at the demo's three only.
	artefacts = await q<{ code: string; artefact: string | object }>(
		"SELECT m.code, v.artefact FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE v.state = 'approved' AND v.version = 1 AND m.code IN ('CIT-ANH', 'LAC-200', 'MCC-100') ORDER BY m.code"
	);
	[treeVersion] = await q<NonNullable<typeof treeVersion>>(
		"SELECT v.version, v.state, v.params, v.artefact FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE m.code = 'LAC-200' AND v.params->'tree' IS NOT NULL ORDER BY v.version"
	);
}, 420_000);

describe('the seeded demo', () => {
	it('has a scan for every container of the seven demo lots', () => {
		expect(new Set(rows.map((r) => r.lot_key)).size).toBe(7);
		expect(rows).toHaveLength(33);
	});

	it('shows every verdict at least once across the seven lots', () => {
		const seen = new Set(rows.map((r) => r.verdict));
		for (const v of ['genuine', 'suspect', 'unknown', 'not-this-material', 'unusable']) expect(seen, `verdict ${v}`).toContain(v);
	});

	it('the unseen adulterant (25 % talc in lactose) reads unknown; the wrong material stays not this material', () => {
		expect(rows.find((r) => r.lot_key === 'lac-talc' && r.container === 2)?.verdict).toBe('unknown');
		expect(rows.filter((r) => r.lot_key === 'lac-talc' && r.container !== 2).map((r) => r.verdict)).toEqual(Array(4).fill('genuine'));
		expect(rows.filter((r) => r.lot_key === 'lac-wrong').map((r) => r.verdict)).toEqual(Array(3).fill('not-this-material'));
		expect(rows.find((r) => r.lot_key === 'lac-diluted' && r.container === 4)?.verdict).toBe('suspect');
		expect(rows.find((r) => r.lot_key === 'lac-corrupt' && r.container === 2)?.verdict).toBe('unusable');
	});

	it("v1 of every demo material does not sit at the component cap, and carries no cap warning", () => {
		expect(artefacts.map((a) => a.code)).toEqual(['CIT-ANH', 'LAC-200', 'MCC-100']);
		for (const { code, artefact } of artefacts) {
			const a = (typeof artefact === 'string' ? JSON.parse(artefact) : artefact) as { family: { components: number; maxComponents: number; warnings?: string[] }; models: Record<string, { components: number; maxComponents: number; warnings?: string[] }> };
			for (const [name, m] of [['family', a.family] as const, ...Object.entries(a.models)]) {
				expect(m.components, `${code} ${name}`).toBeLessThan(m.maxComponents);
				expect((m.warnings ?? []).join(' '), `${code} ${name}`).not.toMatch(/equals the cap/);
			}
		}
	});

	// Issue 14 §5: the monitoring demo, read back through the services the pages use.
	it('the drifting supplier signals on the first lot that clearly leaves its history, while every container reads genuine', async () => {
		const drift = await import('../../src/lib/server/services/drift');
		const { DRIFT_STARCH, DRIFT_SUPPLIER, DRIFT_MATERIAL } = await import('../../src/lib/demo/monitoring');
		const c = await drift.chart(DRIFT_SUPPLIER.code, DRIFT_MATERIAL);
		expect(c.lots).toHaveLength(DRIFT_STARCH.length);
		const first = c.lots.findIndex((l) => l.signal);
		// Lots 1–6 hold no starch: none of them may fire; the first lot with 8 % starch (lot 9) must.
		expect(first).toBe(DRIFT_STARCH.indexOf(0.08));
		expect(c.lots.slice(0, 5).every((l) => l.limits === null)).toBe(true);
		// Flagged before a container fails: every lot, the signalling ones too, meets identity.
		expect(c.lots.map((l) => l.identity)).toEqual(Array(DRIFT_STARCH.length).fill('meets'));
		expect(c.state).toBe('signal');
		// The statistic rises with the starch: lot 10 lies above lot 9, which lies above every starch-free lot.
		const free = c.lots.slice(0, DRIFT_STARCH.lastIndexOf(0) + 1).map((l) => l.value);
		expect(c.lots[first].value).toBeGreaterThan(Math.max(...free));
		expect(c.lots[first + 1].value).toBeGreaterThan(c.lots[first].value);
		expect(await drift.forLot(c.lots[first].lotId)).toMatchObject({ rule: c.lots[first].signal!.rule });
	});

	it('NIR-BENCH-2 cannot screen: its wavelength check is overdue (linearity and noise are current)', async () => {
		const checks = await import('../../src/lib/server/services/instrument-checks');
		const s = await checks.status('NIR-BENCH-2');
		expect(s.qualified).toBe(false);
		expect(s.reason).toMatch(/^instrument not qualified: wavelength check overdue since \d{4}-\d{2}-\d{2}$/);
		expect(Object.fromEntries(s.kinds.map((k) => [k.kind, k.state]))).toEqual({ wavelength: 'overdue', linearity: 'current', noise: 'current' });
	});

	it('LAC-200 has a transfer check to NIR-DOCK-2 that meets the criteria and waits for QA', async () => {
		const transfers = await import('../../src/lib/server/services/transfers');
		const versions = await import('../../src/lib/server/services/model-versions');
		const materials = await import('../../src/lib/server/services/materials');
		const approved = await versions.approvedFor((await materials.get('LAC-200')).id);
		const view = await transfers.forVersion(approved!.versionId);
		const t = view.transfers.filter((x) => x.instrument === 'NIR-DOCK-2');
		expect(t).toHaveLength(1);
		expect(t[0].state).toBe('proposed');
		expect(t[0].evaluation.spectra).toBe(12);
		expect(t[0].evaluation.lots).toHaveLength(3);
		expect(view.approvedFor.map((a) => a.name)).not.toContain('NIR-DOCK-2');
	});
});

// Issue 13 §5: after the lots above are screened with v1, the seed adds rows with label paths (a second approved
// site, a second diluted sub-profile) and builds LAC-200 v2 as a three-level tree, left as a draft for QA.
describe('the demo model tree (LAC-200 v2)', () => {
	const load = async () => {
		const { parseArtefact, screen, treeOf, treeDepth } = await import('../../src/lib/analysis');
		const artefact = parseArtefact(typeof treeVersion!.artefact === 'string' ? treeVersion!.artefact : JSON.stringify(treeVersion!.artefact));
		const run = (axis: Float64Array, values: Float64Array) => screen(artefact, { id: 'x', axis: Array.from(axis), values: Array.from(values), unit: 'nm' });
		return { artefact, run, depth: treeDepth(treeOf(artefact)) };
	};

	it('is version 2, a draft built with an edited tree three levels deep; v1 stays the approved version', async () => {
		expect(treeVersion?.version).toBe(2);
		expect(treeVersion?.state).toBe('draft');
		expect((await load()).depth).toBe(3);
		expect(artefacts.find((a) => a.code === 'LAC-200')).toBeDefined();
	});

	it('names the sub-profile of each demo lot container by its truth; the talc container still reads unknown', async () => {
		const { run } = await load();
		const lots = (await import('../../src/lib/demo')).demoScenario().lots.filter((l) => l.material === 'LAC-200');
		for (const lot of lots)
			for (const f of lot.files.filter((x) => !x.corrupt)) {
				const r = run(f.axis, f.values);
				const where = `${lot.lotKey} C${f.container} (${f.truth})`;
				if (f.truth === 'genuine') expect(r.path, where).toEqual(['genuine', 'site-a']);
				else if (f.truth === 'diluted-starch') expect(r.path, where).toEqual(['diluted', 'starch']);
				else if (f.truth === 'talc-cut') expect(r.verdict, where).toBe('unknown');
				else expect(r.verdict, where).toBe('not-this-material');
			}
	});

	it('held-out spectra of the second site and the second diluent reach their own leaf', async () => {
		const { run } = await load();
		const rows = (await import('../../src/lib/demo')).demoScenario().treeRows.filter((r) => r.role === 'test');
		expect(rows.length).toBe(14);
		for (const r of rows) expect(run(r.axis, r.values).path, r.id).toEqual(r.class === 'genuine/site-b' ? ['genuine', 'site-b'] : ['diluted', 'cellulose']);
	});
});
