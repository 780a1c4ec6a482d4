// The build defaults, defined once: the engine (buildModel), the CLI (which passes nothing for an option not given),
// the service's build schema (API) and the build form all take them from here.
export const BUILD_DEFAULTS = {
	recipe: 'center',
	components: 'auto',
	familyComponents: 'auto',
	alpha: 0.05,
	familyAlpha: 0.01,
	gamma: 0.01,
	limits: 'cv',
	folds: 7,
	speLimit: 'moments',
	groupBy: 'supplier_lot'
} as const;
