// The build form's schema (browser and server): strings where the form sends strings; the service re-validates everything.
import { z } from 'zod';
import { proseText } from '$lib/validation/text';
import { parseRecipe } from '$lib/analysis/preprocess/recipe';
import { alphaRefusal } from '$lib/analysis/alpha-bounds';
import { parseTreeText } from '$lib/validation/tree';
import { BUILD_DEFAULTS } from '$lib/analysis/defaults';

const componentsField = z
	.string()
	.trim()
	.toLowerCase()
	.default(BUILD_DEFAULTS.components)
	.refine((v) => v === 'auto' || (/^\d+$/.test(v) && Number(v) >= 1 && Number(v) <= 30), 'Use auto, or a whole number from 1 to 30');
const probability = (what: string) => z.coerce.number({ invalid_type_error: `${what} must be a number` }).gt(0, `${what} must be above 0`).lt(0.5, `${what} must be below 0.5`);

const alphaBound = (kind: 'class' | 'family') => (a: number, ctx: z.RefinementCtx) => {
	const refusal = alphaRefusal(kind, a);
	if (refusal) ctx.addIssue({ code: 'custom', message: refusal[0].toUpperCase() + refusal.slice(1) });
};

const buildFields = z.object({
	recipe: z
		.string()
		.trim()
		.default(BUILD_DEFAULTS.recipe)
		.superRefine((text, ctx) => {
			try {
				parseRecipe(text);
			} catch (e) {
				ctx.addIssue({ code: 'custom', message: (e as Error).message });
			}
		}),
	familyComponents: componentsField,
	components: componentsField,
	alpha: probability('α').superRefine(alphaBound('class')).default(BUILD_DEFAULTS.alpha),
	familyAlpha: probability('Family α').superRefine(alphaBound('family')).default(BUILD_DEFAULTS.familyAlpha),
	gamma: probability('γ').default(BUILD_DEFAULTS.gamma),
	limits: z.enum(['cv', 'training']).default(BUILD_DEFAULTS.limits),
	folds: z.coerce.number().int('Folds must be a whole number').min(2, 'At least 2 folds').max(20, 'At most 20 folds').default(BUILD_DEFAULTS.folds),
	groupBy: z.enum(['supplier_lot', 'supplier', 'instrument', 'none']).default(BUILD_DEFAULTS.groupBy),
	speLimit: z.enum(['moments', 'jackson-mudholkar', 'box']).default(BUILD_DEFAULTS.speLimit),
	/** The model tree as JSON text ('' = the tree that follows from the library labels); the service checks its rules. */
	tree: z
		.string()
		.max(200_000, 'The tree is too large')
		.default('')
		.superRefine((text, ctx) => {
			const { problem } = parseTreeText(text);
			if (problem) ctx.addIssue({ code: 'custom', message: problem });
		}),
	note: proseText(z.string().trim().max(2000)).default(''),
	// Excluded spectra of the version the build starts from that come back, and why: an explicit act with a reason.
	reinclude: z.array(z.coerce.number().int().positive()).default([]),
	reincludeReason: proseText(z.string().trim().max(2000)).default('')
});
export const buildFormSchema = buildFields.superRefine((f, ctx) => {
	if (f.reinclude.length && f.reincludeReason.length < 3) ctx.addIssue({ code: 'custom', path: ['reincludeReason'], message: 'Write why the ticked spectra come back (at least 3 characters)' });
});
export type BuildForm = z.infer<typeof buildFormSchema>;

export const toParams = ({ reinclude: _r, reincludeReason: _why, ...f }: BuildForm) => ({
	...f,
	components: f.components === 'auto' ? ('auto' as const) : Number(f.components),
	familyComponents: f.familyComponents === 'auto' ? ('auto' as const) : Number(f.familyComponents),
	tree: parseTreeText(f.tree).tree ?? undefined,
	note: f.note || undefined
});
export const toReinclude = (f: BuildForm) => f.reinclude.map((entryId) => ({ entryId, reason: f.reincludeReason }));
