// Seeded pseudo-random numbers, one module for the whole project: the container sampling, the eigen solver's start
// vectors, the demo spectra, the benchmarks and the tests' simulations all draw from mulberry32 with a recorded seed,
// so every run gives the same numbers on every machine. Pure: no Math.random.

/**
 * mulberry32 (Tommy Ettinger, public domain): a 32-bit seeded generator, uniform on [0, 1).
 * Good enough for reproducible choices, start vectors and test simulations; not for cryptography.
 */
export function mulberry32(seed: number): () => number {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

export interface Rng {
	uniform(): number;
	/** Standard normal (Box–Muller). */
	normal(): number;
	/** Normal with the given mean and standard deviation. */
	gauss(mean: number, sd: number): number;
}

export function createRng(seed: number): Rng {
	if (!Number.isFinite(seed)) throw new RangeError(`The seed must be a finite number, got ${seed}`);
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
