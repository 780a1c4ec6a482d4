// Bounds on the type-I error α of an identity model (no imports: the build form in the browser uses it too).
//
// In DD-SIMCA the acceptance boundary is c_crit = χ²_{1−α}(N_h + N_q): the smaller α, the larger c_crit and the
// wider the acceptance area, so a very small α lets more non-genuine material through. A large α rejects too much
// genuine material. The bounds below are common practice for identity testing, set in issue 12: the class α in
// [0.001, 0.1], the family (stage 1) α in [0.001, 0.05].

export const CLASS_ALPHA_BOUNDS = { min: 0.001, max: 0.1 } as const;
export const FAMILY_ALPHA_BOUNDS = { min: 0.001, max: 0.05 } as const;

/** Null when α is allowed; otherwise the reason it is refused, in words a chemometrician can act on. */
export function alphaRefusal(kind: 'class' | 'family', alpha: number): string | null {
	const b = kind === 'class' ? CLASS_ALPHA_BOUNDS : FAMILY_ALPHA_BOUNDS;
	const name = kind === 'class' ? 'the class α' : 'the family α';
	if (typeof alpha !== 'number' || !Number.isFinite(alpha)) return `${name} must be a number in [${b.min}, ${b.max}]`;
	if (alpha < b.min)
		return `${name} ${alpha} is below ${b.min}: a very small α widens the acceptance area (c_crit = χ²₁₋α grows), so non-genuine material would pass; use a value in [${b.min}, ${b.max}]`;
	if (alpha > b.max) return `${name} ${alpha} is above ${b.max}: too many genuine containers would be rejected; use a value in [${b.min}, ${b.max}]`;
	return null;
}
