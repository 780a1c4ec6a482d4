// Model versions: what changed between two versions of one material.
import { screen } from '../../../analysis';
import { prepareStored } from '../artefact-store';
import { invalid } from '../errors';
import * as library from '../library';
import * as materials from '../materials';
import { row, resolve, memberships } from './read';
import { type BuildParams } from './schema';
import { type VersionRow } from './types';

const DIFF_PARAMS: (keyof BuildParams)[] = ['recipe', 'components', 'familyComponents', 'alpha', 'familyAlpha', 'gamma', 'limits', 'folds', 'groupBy', 'speLimit', 'genuine'];

export async function diff(fromRef: string | number, toRef: string | number) {
	const [a, b] = await Promise.all([row(await resolve(fromRef)), row(await resolve(toRef))]);
	if (a.material_id !== b.material_id) throw invalid('Both versions must belong to the same material');
	const [ma, mb] = await Promise.all([memberships(a.id), memberships(b.id)]);
	const inA = new Map(ma.map((m) => [m.entryId, m]));
	const inB = new Map(mb.map((m) => [m.entryId, m]));
	const ids = [...new Set([...inA.keys(), ...inB.keys()])];
	const entries = new Map((await library.entriesOf(a.material_id, ['training'])).map((e) => [e.id, e]));
	const describe = (id: number) => {
		const e = entries.get(id);
		return { entryId: id, label: e?.label ?? '?', sample: e?.sampleId ?? e?.fileName ?? String(id), supplier: e?.supplier ?? null, lot: e?.supplierLot ?? null };
	};
	const added: ReturnType<typeof describe>[] = [];
	const removed: ReturnType<typeof describe>[] = [];
	const excluded: (ReturnType<typeof describe> & { category: string | null; reason: string | null })[] = [];
	const reincluded: (ReturnType<typeof describe> & { reason: string | null; previousReason: string | null })[] = [];
	for (const id of ids.sort((x, y) => x - y)) {
		const x = inA.get(id);
		const y = inB.get(id);
		if (!x && y) {
			if (y.included) added.push(describe(id));
			else excluded.push({ ...describe(id), category: y.category, reason: y.reason });
		} else if (x && !y) removed.push(describe(id));
		else if (x && y && x.included && !y.included) excluded.push({ ...describe(id), category: y.category, reason: y.reason });
		else if (x && y && !x.included && y.included) reincluded.push({ ...describe(id), reason: y.inclusionReason, previousReason: x.reason });
	}
	const params = DIFF_PARAMS.filter((k) => JSON.stringify(a.params[k] ?? null) !== JSON.stringify(b.params[k] ?? null)).map((k) => ({ name: k, from: a.params[k] ?? null, to: b.params[k] ?? null }));
	const figA = new Map((a.figures?.models ?? []).map((m) => [m.name, m]));
	const models = (b.figures?.models ?? []).map((m) => {
		const o = figA.get(m.name);
		return { name: m.name, componentsFrom: o?.components ?? null, componentsTo: m.components, cvFrrFrom: o?.cvFalseRejectRate ?? null, cvFrrTo: m.cvFalseRejectRate, nFrom: o?.n ?? null, nTo: m.n };
	});
	const metrics = (v: VersionRow) =>
		Object.fromEntries((v.validation?.report?.perClass ?? []).map((c) => [c.className, { sensitivity: c.sensitivity.estimate, specificity: c.specificity.estimate }])) as Record<
			string,
			{ sensitivity: number | null; specificity: number | null }
		>;
	const va = metrics(a);
	const vb = metrics(b);
	const validation = [...new Set([...Object.keys(va), ...Object.keys(vb)])].map((name) => ({
		name,
		sensitivityFrom: va[name]?.sensitivity ?? null,
		sensitivityTo: vb[name]?.sensitivity ?? null,
		specificityFrom: va[name]?.specificity ?? null,
		specificityTo: vb[name]?.specificity ?? null
	}));
	const material = await materials.get(a.material_id);
	const validationChange = await sameSetValidation(a, b, `${material.code} v${a.version}`, `${material.code} v${b.version}`);
	return {
		from: { id: a.id, version: a.version, label: `${material.code} v${a.version}`, state: a.state },
		to: { id: b.id, version: b.version, label: `${material.code} v${b.version}`, state: b.state },
		params,
		training: { added, removed, excluded, reincluded },
		models,
		validation,
		validationChange
	};
}

const verdictRate = (hits: number, n: number) => (n ? hits / n : null);

/**
 * Both versions screened on the same validation set: the material's test and challenge spectra as they are now
 * (issue 14 §4), so a version built before the set grew is not compared on a different set. Verdict level: genuine
 * test spectra called genuine (sensitivity) and every other held-out spectrum not called genuine (specificity).
 */
async function sameSetValidation(a: VersionRow, b: VersionRow, labelA: string, labelB: string) {
	if (!a.artefact || !b.artefact) return null;
	const pa = prepareStored(labelA, a.artefact, a.artefact_sha256);
	const pb = prepareStored(labelB, b.artefact, b.artefact_sha256);
	const held = await library.entriesOf(a.material_id, ['test', 'challenge']);
	if (!held.length) return null;
	const spectra = await library.withSpectra(held.map((e) => e.id));
	const genuine = pb.artefact.genuine;
	let genuineN = 0;
	let otherN = 0;
	const hits = { a: { sens: 0, spec: 0 }, b: { sens: 0, spec: 0 } };
	const changed: { entryId: number; label: string; role: string; from: string; to: string }[] = [];
	for (const e of spectra) {
		const input = { id: String(e.id), axis: e.axis, values: e.values, unit: e.unit };
		const va = screen(pa, input).verdict;
		const vb = screen(pb, input).verdict;
		if (e.label === genuine && e.role === 'test') {
			genuineN++;
			if (va === 'genuine') hits.a.sens++;
			if (vb === 'genuine') hits.b.sens++;
		} else {
			otherN++;
			if (va !== 'genuine') hits.a.spec++;
			if (vb !== 'genuine') hits.b.spec++;
		}
		if (va !== vb) changed.push({ entryId: e.id, label: e.label, role: e.role, from: va, to: vb });
	}
	return {
		spectra: spectra.length,
		genuineTests: genuineN,
		others: otherN,
		sensitivityFrom: verdictRate(hits.a.sens, genuineN),
		sensitivityTo: verdictRate(hits.b.sens, genuineN),
		specificityFrom: verdictRate(hits.a.spec, otherN),
		specificityTo: verdictRate(hits.b.spec, otherN),
		changed
	};
}
