// Model versions: build parameters (the form and API schema), exclusion categories and the minimum class sizes.
import { z } from 'zod';
import { nameText, proseText } from '../../../validation/text';
import { parseRecipe } from '../../../analysis';
import { alphaRefusal } from '../../../analysis/alpha-bounds';
import { treeSpecSchema } from '../../../validation/tree';
import { BUILD_DEFAULTS } from '../../../analysis/defaults';

export const APPROVAL_MEANING = 'approved for screening';

export const EXCLUSION_CATEGORIES = ['instrument-fault', 'mislabelled', 'sample-preparation', 'statistical-outlier', 'other'] as const;

export type ExclusionCategory = (typeof EXCLUSION_CATEGORIES)[number];

export const EXCLUSION_LABELS: Record<ExclusionCategory, string> = {
	'instrument-fault': 'Instrument fault',
	mislabelled: 'Mislabelled',
	'sample-preparation': 'Sample preparation',
	'statistical-outlier': 'Statistical outlier at γ',
	other: 'Other'
};

export const GROUPINGS = ['supplier_lot', 'supplier', 'instrument', 'none'] as const;

/** At least this many included training spectra per class, and at least A + 3 when A is fixed. */
export const MIN_PER_CLASS = 10;

export const minimumFor = (components: number | 'auto') => Math.max(MIN_PER_CLASS, components === 'auto' ? 0 : components + 3);

/** α bounds for identity use (issue 12): the engine refuses the same values, with the same reason. */
const alphaIssue = (kind: 'class' | 'family') => (a: number, ctx: z.RefinementCtx) => {
	const refusal = alphaRefusal(kind, a);
	if (refusal) ctx.addIssue({ code: 'custom', message: refusal[0].toUpperCase() + refusal.slice(1) });
};

const components = z.union([z.literal('auto'), z.coerce.number().int('Components must be a whole number').min(1, 'At least 1 component').max(30, 'At most 30 components')]);

const componentsInput = z.preprocess((v) => (v === '' || v == null ? 'auto' : v), components);

/**
 * Mirrors `lotgate build`: --recipe --components (class models) --family-components --alpha --family-alpha --gamma --limits
 * --folds --group-column (here: which label groups the folds) --spe-limit --genuine.
 */
export const buildParamsSchema = z.object({
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
	components: componentsInput.default(BUILD_DEFAULTS.components),
	familyComponents: componentsInput.default(BUILD_DEFAULTS.familyComponents),
	alpha: z.coerce.number().superRefine(alphaIssue('class')).default(BUILD_DEFAULTS.alpha),
	familyAlpha: z.coerce.number().superRefine(alphaIssue('family')).default(BUILD_DEFAULTS.familyAlpha),
	gamma: z.coerce.number().gt(0, 'γ must be above 0').lt(0.5, 'γ must be below 0.5').default(BUILD_DEFAULTS.gamma),
	limits: z.enum(['cv', 'training'], { errorMap: () => ({ message: 'Limits come from cv or training' }) }).default(BUILD_DEFAULTS.limits),
	folds: z.coerce.number().int().min(2, 'At least 2 folds').max(20, 'At most 20 folds').default(BUILD_DEFAULTS.folds),
	groupBy: z.enum(GROUPINGS, { errorMap: () => ({ message: 'Group folds by supplier_lot, supplier, instrument or none' }) }).default(BUILD_DEFAULTS.groupBy),
	speLimit: z.enum(['jackson-mudholkar', 'box', 'moments'], { errorMap: () => ({ message: 'SPE limit is jackson-mudholkar, box or moments' }) }).default(BUILD_DEFAULTS.speLimit),
	genuine: nameText(z.string().trim().toLowerCase()).optional(),
	/** The model tree as edited (nodes, kinds, split methods, per-node recipes, library labels); absent: the tree the labels give. */
	tree: treeSpecSchema.optional(),
	note: proseText(z.string().trim().max(2000)).optional()
});

export type BuildParams = z.infer<typeof buildParamsSchema>;

export type BuildParamsInput = z.input<typeof buildParamsSchema>;

export const exclusionSchema = z.object({
	entryIds: z.array(z.coerce.number().int().positive()).min(1, 'Select at least one spectrum'),
	category: z.enum(EXCLUSION_CATEGORIES, { errorMap: () => ({ message: 'Choose the reason category' }) }),
	reason: proseText(z.string().trim().min(3, 'Write why these spectra are excluded').max(2000))
});

export const inclusionSchema = z.object({
	entryIds: z.array(z.coerce.number().int().positive()).min(1, 'Select at least one spectrum'),
	reason: proseText(z.string().trim().min(3, 'Write why these spectra come back').max(2000))
});

export type ExclusionInput = z.input<typeof exclusionSchema>;
