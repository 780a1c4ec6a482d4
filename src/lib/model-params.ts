// Build parameters in people's words, for pages that show what changed between two model versions (the approval page,
// the diff): the same names the build form uses, never the internal keys. Shared by server and browser code.

export const PARAM_LABELS: Record<string, string> = {
	recipe: 'Preprocessing recipe',
	components: 'Class model components (A)',
	familyComponents: 'Family model components (A)',
	alpha: 'α, class models (type-I error)',
	familyAlpha: 'Family α',
	gamma: 'γ (outlier boundary)',
	limits: 'Limits from',
	folds: 'Cross-validation folds',
	groupBy: 'Kept together in one fold',
	speLimit: 'SPE limit',
	genuine: 'Genuine class'
};

const VALUE_LABELS: Record<string, Record<string, string>> = {
	limits: { cv: 'cross-validated distances', training: 'training (fitted) distances' },
	speLimit: { moments: 'moments', 'jackson-mudholkar': 'Jackson–Mudholkar', box: 'Box (g·χ²)' },
	groupBy: { supplier_lot: 'spectra of the same supplier lot', supplier: 'spectra of the same supplier', instrument: 'spectra of the same instrument', none: 'no grouping (contiguous folds)' },
	components: { auto: 'auto (from cross-validated PRESS)' },
	familyComponents: { auto: 'auto (from cross-validated PRESS)' }
};

/** The label of a build parameter; an unknown key is shown as it is rather than hidden. */
export const paramLabel = (name: string) => PARAM_LABELS[name] ?? name;

/** A parameter's value as the build form words it; "—" when the version did not set it. */
export function paramValue(name: string, value: unknown): string {
	if (value == null || value === '') return '—';
	const text = String(value);
	return VALUE_LABELS[name]?.[text] ?? text;
}
