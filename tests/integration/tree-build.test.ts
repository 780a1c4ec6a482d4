// Building a model tree through the server (issue 13 §1): library labels with "/" are accepted (the first level, or the
// second after "suspect", must be a class of the material), the edited tree goes through the build service, the build
// refuses a tree that breaks a rule with the reason on the tree field, and the validation holds one confusion matrix
// per node and the PLS-DA / kNN comparison. Spectra: the invented tree library (wiring, not a formula).
import { beforeAll, describe, expect, it } from 'vitest';
import { parseArtefact } from '../../src/lib/analysis';
import { specFromLabels } from '../../src/lib/analysis/tree-spec';
import { treeLibrary } from '../../src/lib/demo';
import * as library from '../../src/lib/server/services/library';
import * as materials from '../../src/lib/server/services/materials';
import * as versions from '../../src/lib/server/services/model-versions';
import { makeUser, rootActor, unique } from '../support/factories';
import type { Actor } from '../../src/lib/server/services/actor';

const libraryLabel = (l: string) => (l.startsWith('diluted/') ? `suspect/${l}` : l);
function csv(rows: ReturnType<typeof treeLibrary>, labelOf = libraryLabel) {
	const x = Array.from(rows[0].axis);
	const lines = [['id', 'class', 'supplier_lot', 'role', ...x.map((v) => v.toFixed(1))].join(',')];
	for (const r of rows) lines.push([`${r.id}-${Math.random().toString(36).slice(2, 8)}`, labelOf(r.className), r.group, r.role, ...Array.from(r.values, (v) => v.toFixed(7))].join(','));
	return new TextEncoder().encode(lines.join('\n') + '\n');
}

let chemist: Actor;
let materialId: number;
let code: string;

beforeAll(async () => {
	chemist = (await makeUser(['chemometrician'])).actor;
	code = unique('TB').toUpperCase();
	const m = await materials.create(rootActor, { code, name: 'Tree build test', technique: 'NIR' });
	materialId = m.id;
	for (const [name, kind] of [['genuine', 'genuine'], ['diluted', 'suspect'], ['substituted', 'suspect']] as const) await materials.addClass(rootActor, m.id, { name, kind, description: name });
	const added = await library.addFiles(chemist, m.id, [{ name: 'tree.csv', bytes: csv(treeLibrary({ seed: 1401 })) }], { classColumn: 'class' });
	expect(added.byRoleAndLabel['training:suspect/diluted/starch']).toBe(15);
}, 120_000);

describe('library labels with "/"', () => {
	it('refuses an empty level or an unknown class, naming the row and the class', async () => {
		const rows = treeLibrary({ seed: 1402, lots: 1, perLot: 2 }).slice(0, 2);
		await expect(library.addFiles(chemist, materialId, [{ name: 'bad.csv', bytes: csv(rows, () => 'diluted//starch') }])).rejects.toMatchObject({
			status: 400,
			message: expect.stringMatching(/bad\.csv, row 2: label "diluted\/\/starch": each level .* none may be empty/)
		});
		await expect(library.addFiles(chemist, materialId, [{ name: 'bad.csv', bytes: csv(rows, () => 'suspect/cut/talc') }])).rejects.toMatchObject({
			status: 400,
			message: expect.stringContaining('class "cut" (of label "suspect/cut/talc") is not a class of')
		});
	});
});

describe('a tree edited on the build page', () => {
	it('builds the edited tree: a kNN node below a one-class node, renamed sites; validation per node and the classifier comparison', async () => {
		const summary = await library.summary(materialId);
		const spec = specFromLabels(summary.filter((s) => s.role === 'training').map((s) => s.label), 'genuine');
		const diluted = spec.find((n) => n.name === 'diluted')!;
		diluted.method = 'knn';
		diluted.recipe = 'snv, center';
		spec.find((n) => n.name === 'genuine')!.children[1].name = 'plant-2';
		const v = await versions.get((await versions.createBuild(chemist, materialId, { recipe: 'snv, center', components: 2, familyComponents: 3, folds: 3, tree: spec }, { inline: true })).id);
		expect(v.state, v.error ?? '').toBe('draft');
		expect(v.params.tree).toEqual(JSON.parse(JSON.stringify(spec)));
		const artefact = parseArtefact((await versions.artefactText(v.id)).text);
		expect(artefact.classes).toEqual(['genuine', 'diluted', 'substituted']);
		expect(artefact.splits!.map((s) => [s.path.join('/'), s.method, s.children.join(',')])).toEqual([
			['genuine', 'one-class', 'site-a,plant-2'],
			['diluted', 'knn', 'starch,talc']
		]);
		const val = v.validation!;
		expect(val.tree!.nodes.map((n) => [n.node.join('/'), n.method, n.rows.join(',')])).toEqual([
			['', 'one-class', 'genuine,diluted,substituted,from elsewhere'],
			['genuine', 'one-class', 'site-a,plant-2,from elsewhere'],
			['diluted', 'knn', 'starch,talc,from elsewhere']
		]);
		// every test spectrum of diluted/… is counted once at the diluted node; the 6 challenge spectra are aliens
		expect(val.tree!.nodes[2].expected).toBe(6);
		expect(val.tree!.path.rows.at(-1)).toBe('alien');
		const d = val.discriminants!;
		expect(d.classifiers.map((c) => c.method)).toEqual(['plsda', 'knn']);
		for (const c of d.classifiers) expect(c.aliens).toBe(6);
		expect(d.oneClass.aliens).toBe(6);
		// the verdict-level report sees the label paths at their level-1 class
		expect(val.report!.confusion.flat().reduce((a, b) => a + b, 0)).toBe(15);
		// the PDF report carries the per-node tables and the comparison (pdfkit writes text uncompressed only in part,
		// so this checks it is made; the page test reads the same figures)
		const { validationPdf } = await import('../../src/lib/server/reports/validation-pdf');
		const pdf = await validationPdf(v);
		expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
	}, 120_000);

	it('refuses a tree that breaks a rule before any job runs, on the tree field', async () => {
		const summary = await library.summary(materialId);
		const spec = specFromLabels(summary.filter((s) => s.role === 'training').map((s) => s.label), 'genuine');
		spec.find((n) => n.name === 'genuine')!.method = 'plsda';
		const site = spec.find((n) => n.name === 'genuine')!.children[0];
		site.children = [
			{ ...site, name: 'line-1', labels: [...site.labels], children: [] },
			{ ...site, name: 'line-2', labels: [], children: [] }
		];
		site.labels = [];
		site.method = 'knn';
		await expect(versions.createBuild(chemist, materialId, { recipe: 'snv, center', tree: spec }, { inline: true })).rejects.toMatchObject({
			status: 400,
			field: 'tree',
			message: expect.stringContaining(
				'node genuine › site-a: a discriminant split is allowed only below a node a one-class model accepted, but this node is chosen by the plsda split of genuine'
			)
		});
		await expect(versions.createBuild(chemist, materialId, { recipe: 'snv, center', tree: spec }, { inline: true })).rejects.toMatchObject({
			message: expect.stringContaining('node genuine › site-a › line-2: holds no library label')
		});
	});
});
