// Seeded pseudo-random numbers for the demo data: the project's one generator (src/lib/analysis/prng.ts).
export { mulberry32, createRng, type Rng } from '../analysis/prng';
