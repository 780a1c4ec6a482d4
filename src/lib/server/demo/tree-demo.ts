// Demo step for model trees (issue 13 §5): after LAC-200 v1 is approved and the demo lots are screened with it, the
// chemist adds the lactose rows with label paths (a second approved site, a second diluted sub-profile) and builds
// version 2 as a three-level tree, left as a draft for QA to review and approve. Version 1 and every lot's verdict
// stay as they were. Idempotent: a material that already has a version built with an edited tree is left as it is.
import { QueryTypes } from 'sequelize';
import type { TreeSpec } from '../../analysis/tree-spec';
import type { DemoFile } from '../../demo';
import { sequelize } from '../db';
import type { Actor } from '../services/actor';
import * as library from '../services/library';
import * as materials from '../services/materials';
import * as versions from '../services/model-versions';
import * as users from '../services/users';

const leaf = (name: string, kind: 'genuine' | 'suspect', labels: string[]) => ({ name, kind, method: 'one-class' as const, recipe: '', components: 3, k: 'auto' as const, labels, children: [] });

/**
 * The demo tree. The library's flat labels are placed by the tree, not rewritten: the original genuine rows are
 * genuine › site-a and the starch rows diluted › starch (same spectra, same labels as version 1 trained on).
 */
export const DEMO_TREE: TreeSpec = [
	{ ...leaf('genuine', 'genuine', []), children: [leaf('site-a', 'genuine', ['genuine']), leaf('site-b', 'genuine', ['genuine/site-b'])] },
	{ ...leaf('diluted', 'suspect', []), children: [leaf('starch', 'suspect', ['diluted-starch']), leaf('cellulose', 'suspect', ['suspect/diluted/cellulose'])] },
	leaf('anhydrous-grade', 'suspect', ['anhydrous-grade'])
];

async function actorFor(email: string, roles: Actor['roles']): Promise<Actor> {
	const u = await users.findByEmail(email);
	if (!u) throw new Error(`demo account ${email} is missing`);
	return { id: u.id, label: u.name, roles, requestId: 'demo-seed' };
}

export async function seedTreeDemo(files: (DemoFile & { material: string })[], log: (line: string) => void = console.log) {
	const chemist = await actorFor('chemist@demo.test', ['chemometrician']);
	for (const code of [...new Set(files.map((f) => f.material))]) {
		const material = await materials.get(code);
		const built = await sequelize().query<{ n: string }>("SELECT count(*) AS n FROM model_versions WHERE material_id = :id AND params->'tree' IS NOT NULL", {
			replacements: { id: material.id },
			type: QueryTypes.SELECT
		});
		if (Number(built[0].n) > 0) continue;
		// "diluted" is the level-1 profile the new sub-profile rows name (suspect/diluted/cellulose)
		const [has] = await sequelize().query("SELECT 1 FROM material_classes WHERE material_id = :id AND name = 'diluted'", { replacements: { id: material.id }, type: QueryTypes.SELECT });
		if (!has)
			await materials.addClass(chemist, material.id, { name: 'diluted', kind: 'suspect', description: 'Diluted with a filler; the tree names which (starch or cellulose)' }, 'demo seed: model tree');
		const [{ n }] = await sequelize().query<{ n: string }>("SELECT count(*) AS n FROM library_entries WHERE material_id = :id AND label LIKE '%/%'", {
			replacements: { id: material.id },
			type: QueryTypes.SELECT
		});
		if (Number(n) === 0) {
			const added = await library.addFiles(
				chemist,
				material.id,
				files.filter((f) => f.material === code).map((f) => ({ name: f.name, bytes: f.bytes })),
				{ classColumn: 'class', roleColumn: 'role' }
			);
			log(`[seed] ${code}: ${added.added} library spectra with label paths for the model tree`);
		}
		const { id } = await versions.createBuild(
			chemist,
			material.id,
			// A = 6 for the level-1 models: two sites widen the genuine class and two diluents the diluted one; with v1's
			// A = 3 some held-out genuine spectra fell outside genuine and inside diluted (8 of 32 on the demo data).
			{ recipe: 'snv,savgol(11,2,1),center', components: 6, familyComponents: 3, tree: DEMO_TREE, note: 'demo seed: three-level tree (two approved sites, two diluted sub-profiles); A = 6 at level 1, 3 below' },
			{ inline: true }
		);
		const v = await versions.get(id);
		if (v.state !== 'draft') throw new Error(`demo tree build of ${code} failed: ${v.error}`);
		log(`[seed] ${code}: v${v.version} built as a three-level tree, a draft for QA to approve`);
	}
}
