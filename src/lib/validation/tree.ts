// The model tree as sent by the build page and the API (shape only; planTree in analysis/tree-spec.ts checks the rules).
import { z } from 'zod';
import type { TreeSpecNode } from '../analysis/tree-spec';

const count = (what: string) =>
	z.preprocess(
		(v) => (v === '' || v == null ? 'auto' : typeof v === 'string' && /^\d+$/.test(v.trim()) ? Number(v) : typeof v === 'string' ? v.trim().toLowerCase() : v),
		z.union([z.literal('auto'), z.number().int(`${what} must be a whole number`).min(1, `${what}: at least 1`).max(30, `${what}: at most 30`)], {
			errorMap: () => ({ message: `${what} is auto or a whole number from 1 to 30` })
		})
	);

export const treeNodeSchema: z.ZodType<TreeSpecNode, z.ZodTypeDef, unknown> = z.lazy(() =>
	z.object({
		name: z.string().trim().toLowerCase().max(40, 'A node name has at most 40 characters'),
		kind: z.enum(['genuine', 'suspect', 'grouping'], { errorMap: () => ({ message: 'A node kind is genuine, suspect or grouping' }) }),
		method: z.enum(['one-class', 'plsda', 'knn'], { errorMap: () => ({ message: 'A split method is one-class, plsda or knn' }) }).default('one-class'),
		recipe: z.string().trim().max(500).default(''),
		components: count('Components').default('auto'),
		k: count('k').default('auto'),
		labels: z.array(z.string().trim().toLowerCase().max(60)).max(100).default([]),
		children: z.array(treeNodeSchema).max(50).default([])
	})
);

/** At most 6 levels and 200 nodes: deeper trees have no training spectra to support them. */
export const treeSpecSchema = z
	.array(treeNodeSchema)
	.max(50)
	.superRefine((spec, ctx) => {
		let nodes = 0;
		const depth = (n: TreeSpecNode[], d: number): number => Math.max(d, ...n.map((c) => (nodes++, depth(c.children, d + 1))));
		if (depth(spec, 0) > 6) ctx.addIssue({ code: 'custom', message: 'The tree is deeper than 6 levels' });
		if (nodes > 200) ctx.addIssue({ code: 'custom', message: `The tree has ${nodes} nodes (at most 200)` });
	});

/** The build form sends the tree as JSON text ('' = the tree that follows from the library labels). */
export function parseTreeText(text: string): { tree: TreeSpecNode[] | null; problem: string | null } {
	if (!text.trim()) return { tree: null, problem: null };
	let raw: unknown;
	try {
		raw = JSON.parse(text);
	} catch {
		return { tree: null, problem: 'The tree is not valid JSON' };
	}
	const r = treeSpecSchema.safeParse(raw);
	if (!r.success) return { tree: null, problem: r.error.issues.map((i) => `${i.path.length ? `${i.path.join('.')}: ` : ''}${i.message}`).join('; ') };
	return { tree: r.data, problem: null };
}
