// Seeded pseudo-random numbers, so the demo data are the same bytes on every machine.

/** mulberry32: small, fast, and good enough for synthetic noise (not for anything secret). */
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
