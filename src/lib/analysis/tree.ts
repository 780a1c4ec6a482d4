import { AnalysisError } from './errors';
import type { ModelArtefact, ModelJson, SplitJson, SplitMethod } from './artefact';
import type { ModelStats } from './projection';
import type { Verdict } from './classify';

/**
 * Model trees: the root is the family model; level 1 is the class layer of a schemaVersion 1 artefact
 * (genuine and suspect profiles, decided by the unchanged two-stage table in classify.ts); every deeper
 * split refines the name of the node chosen above it. A split is one-class (one DD-SIMCA model per child,
 * may answer "none of these") or discriminant (PLS-DA or kNN, closed-set, allowed only where the node
 * being split was itself accepted by a one-class model).
 */

export const SPLIT_METHODS: readonly SplitMethod[] = ['one-class', 'plsda', 'knn'];
export const PATH_SEPARATOR = '/';

/** Evidence of one level of the walk. */
export interface LevelEvidence {
	/** Path of the node whose children this level decides ([] = the root: family model and level-1 classes). */
	node: string[];
	method: SplitMethod;
	children: string[];
	/** One-class: each child model's statistics (the family model's are in the result's `family`). */
	stats: Record<string, ModelStats>;
	/** One-class: children whose model accepts. */
	accepted: string[];
	/** Discriminant: the classifier's output per child (PLS-DA ŷ, or kNN share of the k neighbours). */
	classifier: { method: 'plsda' | 'knn'; scores: Record<string, number>; components?: number; k?: number } | null;
	/** The child chosen, or null for "none of these" (or a root level that ends the walk). */
	chosen: string | null;
	ambiguous: boolean;
	reason: string | null;
}

/** Parses a class label such as "diluted/starch" into its path; every segment must be non-empty. */
export function labelPath(label: string): string[] {
	const parts = label.split(PATH_SEPARATOR).map((s) => s.trim());
	if (parts.some((s) => s === '')) throw new AnalysisError('bad-class', `class label "${label}" has an empty level (use names separated by "/")`);
	return parts;
}

export const pathKey = (path: readonly string[]): string => path.join(PATH_SEPARATOR);

/** The splits of an artefact (a schemaVersion 1 artefact has none: it is a two-level tree). */
export function splitsOf(a: ModelArtefact): SplitJson[] {
	return a.splits ?? [];
}

/** Node kinds: the root, the genuine class and everything below it, suspect profiles and everything below them. */
export type NodeKind = 'root' | 'genuine' | 'suspect';

export interface TreeNodeView {
	path: string[];
	name: string;
	kind: NodeKind;
	/** Training spectra of the node (the root: all). */
	n: number;
	/** How this node's own membership is decided: by its parent's split method. */
	decidedBy: SplitMethod | null;
	/** The node's own one-class model, if it has one (the root: the family model). */
	model: ModelJson | null;
	/** How the node decides among its children, if it has any. */
	split: { method: SplitMethod; recipe: string; components: string; classifier: string | null } | null;
	children: TreeNodeView[];
}

const componentsText = (models: ModelJson[]): string => models.map((m) => `${m.name} A=${m.components}${m.componentsRule === 'auto' ? ' (auto)' : ''}`).join(', ');

/** A version-independent view of the tree for pages, reports and the CLI: walk it, never the raw fields. */
export function treeOf(a: ModelArtefact): TreeNodeView {
	const splits = new Map(splitsOf(a).map((s) => [pathKey(s.path), s]));
	const node = (path: string[], kind: NodeKind, model: ModelJson | null, n: number, decidedBy: SplitMethod | null): TreeNodeView => {
		const split = path.length === 0 ? null : splits.get(pathKey(path));
		let children: TreeNodeView[] = [];
		let splitView: TreeNodeView['split'] = null;
		if (path.length === 0) {
			children = a.classes.map((c) => node([c], c === a.genuine ? 'genuine' : 'suspect', a.models[c], a.classSpectra?.[c]?.n ?? a.models[c].n, 'one-class'));
			if (a.classes.length > 0) splitView = { method: 'one-class', recipe: a.recipe, components: componentsText(a.classes.map((c) => a.models[c])), classifier: null };
		} else if (split) {
			children = split.children.map((c) =>
				node([...path, c], kind, split.models[c] ?? null, split.classSpectra[c]?.n ?? 0, split.method)
			);
			const cl = split.classifier;
			splitView = {
				method: split.method,
				recipe: split.recipe,
				components: split.method === 'one-class' ? componentsText(split.children.map((c) => split.models[c])) : '',
				classifier: cl === null ? null : cl.method === 'plsda' ? `PLS-DA, ${cl.components} components (${cl.componentsRule})` : `kNN, k = ${cl.k} (${cl.kRule})`
			};
		}
		return { path, name: path.length === 0 ? 'family' : path[path.length - 1], kind, n, decidedBy, model, split: splitView, children };
	};
	return node([], 'root', a.family, a.family.n, null);
}

/** Every node of the tree, depth first (root first). */
export function walkTree(root: TreeNodeView): TreeNodeView[] {
	const out: TreeNodeView[] = [];
	const go = (n: TreeNodeView) => {
		out.push(n);
		n.children.forEach(go);
	};
	go(root);
	return out;
}

/** Depth of the tree: 1 = family only, 2 = family and classes (schemaVersion 1), 3+ with deeper splits. */
export function treeDepth(root: TreeNodeView): number {
	return 1 + (root.children.length === 0 ? 0 : Math.max(...root.children.map(treeDepth)));
}

/**
 * The name of a result, from the top-level word down the path, e.g. "suspect › diluted › starch",
 * "genuine › site-b", or "suspect › diluted › unknown sub-profile" where a level answered "none of these".
 */
export function describePath(verdict: Verdict, path: string[], levels: LevelEvidence[], word: (verdict: Verdict) => string = (v) => v): string {
	// `word` lets pages and certificates write the verdict as people read it; the CLI keeps the key.
	const parts: string[] = [word(verdict)];
	// the genuine class's own name adds nothing after the word "genuine"
	const named = verdict === 'genuine' ? path.slice(1) : path;
	parts.push(...named);
	const last = levels[levels.length - 1];
	if (last && last.node.length > 0 && last.chosen === null) parts.push(verdict === 'genuine' ? 'unknown sub-level' : 'unknown sub-profile');
	return parts.join(' › ');
}

/**
 * Deeper one-class level: children whose model accepts; none → "none of these"; one → that child;
 * several → the smallest c/c_crit, flagged ambiguous. The top-level word is never changed here.
 */
export function decideOneClassLevel(node: string[], children: { name: string; stats: ModelStats }[]): Omit<LevelEvidence, 'method' | 'classifier'> {
	const ratio = (s: ModelStats) => s.c / s.cCrit;
	const r3 = (x: number) => (Number.isFinite(x) ? x.toFixed(3) : String(x));
	const stats = Object.fromEntries(children.map((c) => [c.name, c.stats]));
	const accepted = children.filter((c) => c.stats.accepted).sort((a, b) => ratio(a.stats) - ratio(b.stats) || (a.name < b.name ? -1 : 1));
	const base = { node, children: children.map((c) => c.name), stats, accepted: accepted.map((c) => c.name) };
	const where = node.join(' › ');
	if (accepted.length === 0) {
		const best = [...children].sort((a, b) => ratio(a.stats) - ratio(b.stats))[0];
		return { ...base, chosen: null, ambiguous: false, reason: `no model below ${where} accepts (closest: ${best.name}, c/c_crit = ${r3(ratio(best.stats))})` };
	}
	const best = accepted[0];
	if (accepted.length === 1) return { ...base, chosen: best.name, ambiguous: false, reason: null };
	const others = accepted.slice(1).map((c) => `${c.name} (c/c_crit = ${r3(ratio(c.stats))})`);
	return { ...base, chosen: best.name, ambiguous: true, reason: `several models below ${where} accept: ${best.name} (c/c_crit = ${r3(ratio(best.stats))}), ${others.join(', ')}` };
}
