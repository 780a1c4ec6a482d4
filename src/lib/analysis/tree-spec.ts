import { parseRecipe } from './preprocess/recipe';
import { labelPath, pathKey } from './tree';
import type { SplitMethod } from './artefact';
import type { NodeOptions } from './tree-build';

/**
 * A model tree as the chemometrician edits it (build page, API): nodes below the root model, each with a
 * name, a kind, how it decides among its children, and, at a leaf, the library labels whose training spectra it holds.
 * A library label may itself be a path ("suspect/diluted/starch" or "diluted/starch"); the tree decides where its
 * spectra sit, so a flat library can be built into a deep tree and a deep library into a renamed one.
 *
 * Kinds: level-1 nodes are `genuine` (exactly one) or `suspect` (the unchanged decision table); below them a node is
 * of its branch's kind (an approved sub-profile of genuine, such as a site; a sub-profile of a suspect) or `grouping`,
 * a node that only gathers its children and holds no spectra of its own.
 */
export type SpecKind = 'genuine' | 'suspect' | 'grouping';

export interface TreeSpecNode {
	name: string;
	kind: SpecKind;
	/** How this node decides among its children (ignored at a leaf, where it must stay one-class). */
	method: SplitMethod;
	/** Recipe of the models of this node's children; '' = the version's recipe (level 1 always uses it). */
	recipe: string;
	/** One-class children: components per child model; PLS-DA: latent variables ('auto' = cross-validated). */
	components: number | 'auto';
	/** kNN: neighbours ('auto' = cross-validated odd k). */
	k: number | 'auto';
	/** Leaf only: library labels (training) whose spectra this node holds. */
	labels: string[];
	children: TreeSpecNode[];
}

export type TreeSpec = TreeSpecNode[];

/** A plan the engine can build: each library label's class path, the genuine class, per-node options. */
export interface TreePlan {
	classOf: Record<string, string>;
	genuine: string;
	nodes: Record<string, NodeOptions>;
	/** Training spectra per node path ("diluted", "diluted/starch"). */
	counts: Record<string, number>;
}

export const NODE_NAME = /^[a-z0-9][a-z0-9-]{0,39}$/;
/** Each child of a discriminant split needs this many spectra, so every cross-validation fold trains on every child (common practice). */
export const MIN_PER_DISCRIMINANT_CHILD = 5;

const minimumOneClass = (components: number | 'auto') => Math.max(10, components === 'auto' ? 0 : components + 3);

export const blankNode = (name: string, kind: SpecKind): TreeSpecNode => ({ name, kind, method: 'one-class', recipe: '', components: 'auto', k: 'auto', labels: [], children: [] });

/**
 * The tree that follows from the library's labels alone (what `lotgate build` does): a label "diluted/starch" makes
 * node "diluted" with child "starch". A leading "genuine" or "suspect" segment names the kind and is dropped when a
 * deeper name follows ("suspect/diluted/starch" → diluted › starch). The level-1 node named `genuine` is genuine.
 */
export function specFromLabels(labels: string[], genuine: string | null = null): TreeSpec {
	const roots: TreeSpec = [];
	for (const label of [...new Set(labels)].sort()) {
		let path: string[];
		try {
			path = labelPath(label);
		} catch {
			continue;
		}
		if (path.length > 1 && path[0] === 'suspect') path = path.slice(1);
		let level = roots;
		path.forEach((name, d) => {
			let node = level.find((n) => n.name === name);
			if (!node) {
				const top = d === 0 ? name : path[0];
				const isGenuine = genuine !== null ? top === genuine : top === 'genuine';
				node = blankNode(name, isGenuine ? 'genuine' : 'suspect');
				level.push(node);
			}
			if (d === path.length - 1) node.labels.push(label);
			level = node.children;
		});
	}
	return roots;
}

/**
 * The material class a library label belongs to: its first level, or its second when the first is the word "suspect"
 * ("suspect/diluted/starch" → diluted). Every level must be a name (lower-case letters, digits, dashes).
 */
export function labelClass(label: string): { path: string[]; className: string } | { problem: string } {
	const path = label.split('/').map((s) => s.trim());
	const bad = path.find((s) => !NODE_NAME.test(s));
	if (bad !== undefined)
		return { problem: `label "${label}": each level (between "/") must use lower-case letters, digits and dashes${bad === '' ? ' and none may be empty' : ` ("${bad}" does not)`}` };
	return { path, className: path.length > 1 && path[0] === 'suspect' && path[1] !== undefined ? path[1] : path[0] };
}

/** Every node with its path, parents first. */
export function flattenSpec(spec: TreeSpec): { path: string[]; node: TreeSpecNode }[] {
	const out: { path: string[]; node: TreeSpecNode }[] = [];
	const go = (n: TreeSpecNode, parent: string[]) => {
		const path = [...parent, n.name];
		out.push({ path, node: n });
		n.children.forEach((c) => go(c, path));
	};
	spec.forEach((n) => go(n, []));
	return out;
}

/**
 * Checks a tree against the training spectra per library label and turns it into a build plan. Every problem is
 * named (node path first), all at once, so the editor can list them; `plan` is null when there is any.
 * `components` is the version's class-model setting (level 1 and nodes left on auto use it).
 */
export function planTree(spec: TreeSpec, trainingPerLabel: Record<string, number>, options: { components?: number | 'auto' } = {}): { plan: TreePlan | null; problems: string[]; counts: Record<string, number> } {
	const problems: string[] = [];
	const components = options.components ?? 'auto';
	const nodes = flattenSpec(spec);
	const counts: Record<string, number> = {};
	const classOf: Record<string, string> = {};
	const seen = new Set<string>();
	if (spec.length === 0) problems.push('the tree is empty: add a genuine node and at least one suspect node');
	for (const { path, node } of nodes) {
		const key = pathKey(path);
		const where = `node ${path.join(' › ')}`;
		if (!NODE_NAME.test(node.name)) problems.push(`${where}: the name "${node.name}" must use lower-case letters, digits and dashes (1–40 characters, e.g. site-b)`);
		if (seen.has(key)) problems.push(`${where}: two nodes with this name under the same parent`);
		seen.add(key);
		const depth = path.length;
		if (depth === 1 && node.kind !== 'genuine' && node.kind !== 'suspect') problems.push(`${where}: a node of the first level is genuine or suspect (the decision table needs one of them), not ${node.kind}`);
		if (depth > 1) {
			const branch = nodes.find((n) => n.path.length === 1 && n.path[0] === path[0])!.node.kind;
			if ((branch === 'genuine' || branch === 'suspect') && node.kind !== 'grouping' && node.kind !== branch) problems.push(`${where}: below a ${branch} node a node is ${branch} or grouping, not ${node.kind}`);
		}
		const hasChildren = node.children.length > 0;
		if (hasChildren && node.labels.length > 0)
			problems.push(`${where}: has children and also holds the labels ${node.labels.join(', ')}; put those spectra in one of its children (a node's spectra are its children's)`);
		if (!hasChildren && node.labels.length === 0) problems.push(`${where}: holds no library label; choose the labels of its training spectra or remove the node`);
		if (node.kind === 'grouping' && !hasChildren) problems.push(`${where}: a grouping node needs children`);
		for (const label of node.labels) {
			if (classOf[label] !== undefined) problems.push(`${where}: label "${label}" is already used by node ${classOf[label].split('/').join(' › ')}`);
			else if (!(trainingPerLabel[label] > 0)) problems.push(`${where}: label "${label}" has no training spectra in the library`);
			classOf[label] ??= key;
		}
		if (!['one-class', 'plsda', 'knn'].includes(node.method)) problems.push(`${where}: the split method is one-class, plsda or knn, not "${node.method}"`);
		if (!hasChildren && node.method !== 'one-class') problems.push(`${where}: a ${node.method} split needs children to decide among`);
		if (hasChildren && node.method !== 'one-class') {
			if (node.children.length < 2) problems.push(`${where}: a discriminant (${node.method}) split needs at least two children`);
			const parent = nodes.find((n) => pathKey(n.path) === pathKey(path.slice(0, -1)));
			if (parent && parent.node.method !== 'one-class')
				problems.push(
					`${where}: a discriminant split is allowed only below a node a one-class model accepted, but this node is chosen by the ${parent.node.method} split of ${parent.path.join(' › ')} (a closed-set classifier cannot say "none of these")`
				);
		}
		if (node.recipe.trim() !== '') {
			try {
				const steps = parseRecipe(node.recipe);
				if (steps.some((s) => s.op === 'gaps')) problems.push(`${where}: gaps(n) belongs to the version's recipe only`);
				if (steps.filter((s) => s.op === 'range').length > 1) problems.push(`${where}: a node recipe takes at most one range window (several windows belong to the version's recipe)`);
			} catch (e) {
				problems.push(`${where}: recipe: ${(e as Error).message}`);
			}
		}
		for (const [field, v] of [['components', node.components], ['k', node.k]] as const)
			if (v !== 'auto' && !(Number.isInteger(v) && v >= 1 && v <= 30)) problems.push(`${where}: ${field} is auto or a whole number from 1 to 30, not ${String(v)}`);
	}
	const genuine = spec.filter((n) => n.kind === 'genuine');
	if (spec.length > 0 && genuine.length !== 1) problems.push(`the first level needs exactly one genuine node, found ${genuine.length}${genuine.length ? ` (${genuine.map((g) => g.name).join(', ')})` : ''}`);
	const missing = Object.entries(trainingPerLabel).filter(([l, n]) => n > 0 && classOf[l] === undefined);
	for (const [l, n] of missing) problems.push(`library label "${l}" (${n} training spectra) is in no node: give it to a leaf (spectra outside the tree would silently leave the model)`);

	// counts bottom-up, then the size rules of each split
	const countOf = (n: TreeSpecNode): number => (n.children.length ? n.children.reduce((s, c) => s + countOf(c), 0) : n.labels.reduce((s, l) => s + (trainingPerLabel[l] ?? 0), 0));
	for (const { path, node } of nodes) counts[pathKey(path)] = countOf(node);
	for (const n of spec) {
		const need = minimumOneClass(components);
		if (counts[n.name] < need) problems.push(`node ${n.name}: ${counts[n.name]} training spectra, its one-class model needs at least ${need} (max(10, A + 3))`);
	}
	for (const { path, node } of nodes) {
		if (node.children.length === 0) continue;
		for (const c of node.children) {
			const have = counts[pathKey([...path, c.name])];
			const need = node.method === 'one-class' ? minimumOneClass(node.components === 'auto' ? components : node.components) : MIN_PER_DISCRIMINANT_CHILD;
			if (have < need)
				problems.push(
					`node ${[...path, c.name].join(' › ')}: ${have} training spectra, ${node.method === 'one-class' ? `its one-class model needs at least ${need} (max(10, A + 3))` : `a child of a ${node.method} split needs at least ${need}`}`
				);
		}
	}
	if (problems.length) return { plan: null, problems, counts };
	const plan: TreePlan = { classOf, genuine: genuine[0].name, nodes: {}, counts };
	for (const { path, node } of nodes) {
		if (node.children.length === 0) continue;
		const opt: NodeOptions = { method: node.method };
		if (node.recipe.trim()) opt.recipe = node.recipe.trim();
		if (node.components !== 'auto' || node.method === 'plsda') opt.components = node.components;
		if (node.method === 'knn') opt.k = node.k;
		plan.nodes[pathKey(path)] = opt;
	}
	return { plan, problems, counts };
}
