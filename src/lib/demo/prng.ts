// Seeded pseudo-random numbers, so the demo data are the same bytes on every machine.

// One generator for the whole project: the container sampling's mulberry32.
import { mulberry32 } from '../analysis/sampling';
export { mulberry32 };

export interface Rng {
	uniform(): number;
	/** Standard normal (Box–Muller). */
	normal(): number;
	/** Normal with the given mean and standard deviation. */
	gauss(mean: number, sd: number): number;
}

export function createRng(seed: number): Rng {
	const u = mulberry32(seed);
	let spare: number | null = null;
	const normal = () => {
		if (spare !== null) {
			const s = spare;
			spare = null;
			return s;
		}
		let a = 0;
		while (a === 0) a = u();
		const b = u();
		const r = Math.sqrt(-2 * Math.log(a));
		spare = r * Math.sin(2 * Math.PI * b);
		return r * Math.cos(2 * Math.PI * b);
	};
	return { uniform: u, normal, gauss: (mean, sd) => mean + sd * normal() };
}
