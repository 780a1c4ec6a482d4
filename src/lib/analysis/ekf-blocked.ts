// Element-wise k-fold PCA cross-validation with the variables left out in contiguous blocks.
//
// Bro, Kjeldahl, Smilde & Kiers (2008, Anal. Bioanal. Chem. 390:1241–1251) require that a left-out element is
// predicted without using it: the row is left out of the model (the object folds), and the element is predicted
// from the row's other elements. In their ekf the elements of a left-out row are themselves left out in segments.
// Left out one variable at a time on a densely sampled spectrum, a variable is predicted from its neighbours,
// which carry nearly the same information, so PRESS keeps falling with A and the suggested count runs into the cap
// (gasoline at 20 000 points: A = 15, the cap; at 401 points: 7). Leaving out a contiguous block of variables,
// wider than the correlation length of neighbouring points, removes that leak. See docs/methods.md §8.
//
// For a block B of a left-out row z (scaled with the fold model) and orthonormal loadings P (p×A):
//   t̂ = (P₋ᴮᵀP₋ᴮ)⁻¹P₋ᴮᵀz₋ᴮ, ẑ_B = P_B t̂, and with M = P₋ᴮᵀP₋ᴮ = I − P_BᵀP_B, t = Pᵀz:
//   z_B − ẑ_B = z_B − P_B M⁻¹(t − P_Bᵀz_B)      (equivalently (I − P_BP_Bᵀ)⁻¹(z_B − P_B t), Woodbury).
// M_A for A components is the leading A×A block of M_Amax, and so is its Cholesky factor: one factorisation per
// block and fold model serves every A. With blocks of width 1 this is exactly the element-wise form e_j/(1 − d_j).
import { AnalysisError } from './errors';

export interface VariableBlocks {
	/** start (inclusive) and end (exclusive) index of each block */
	start: Int32Array;
	end: Int32Array;
}

/** Default number of contiguous variable blocks (documented in docs/methods.md §8). */
export const DEFAULT_VARIABLE_BLOCKS = 100;

/** `count` contiguous blocks of near-equal width over p variables (fewer when p < count). */
export function variableBlocks(p: number, count = DEFAULT_VARIABLE_BLOCKS): VariableBlocks {
	if (!(Number.isInteger(p) && p >= 1)) throw new AnalysisError('bad-argument', `p must be a positive integer, got ${p}`);
	if (!(Number.isInteger(count) && count >= 1)) throw new AnalysisError('bad-argument', `the number of variable blocks must be a positive integer, got ${count}`);
	const k = Math.min(count, p);
	const start = new Int32Array(k);
	const end = new Int32Array(k);
	for (let b = 0; b < k; b++) {
		start[b] = Math.floor((b * p) / k);
		end[b] = Math.floor(((b + 1) * p) / k);
	}
	return { start, end };
}

/** Cholesky factors of M = I − P_BᵀP_B (Amax×Amax, lower, row-major) per block, and from which A each is singular. */
export interface BlockFactors {
	blocks: VariableBlocks;
	Amax: number;
	chol: Float64Array[];
	/** first A (1-based) at which M_A is not positive definite; Amax + 1 when none */
	singularFrom: Int32Array;
}

export function blockFactors(loadings: Float64Array, Amax: number, p: number, blocks: VariableBlocks): BlockFactors {
	const K = blocks.start.length;
	const chol: Float64Array[] = [];
	const singularFrom = new Int32Array(K).fill(Amax + 1);
	for (let b = 0; b < K; b++) {
		const M = new Float64Array(Amax * Amax);
		for (let a = 0; a < Amax; a++)
			for (let c = 0; c <= a; c++) {
				let s = 0;
				for (let j = blocks.start[b]; j < blocks.end[b]; j++) s += loadings[a * p + j] * loadings[c * p + j];
				M[a * Amax + c] = (a === c ? 1 : 0) - s;
			}
		// in-place Cholesky of the lower triangle; stop at the first non-positive pivot
		for (let a = 0; a < Amax; a++) {
			let d = M[a * Amax + a];
			for (let c = 0; c < a; c++) d -= M[a * Amax + c] ** 2;
			if (!(d > 1e-10)) {
				singularFrom[b] = a + 1;
				break;
			}
			const l = Math.sqrt(d);
			M[a * Amax + a] = l;
			for (let r = a + 1; r < Amax; r++) {
				let s = M[r * Amax + a];
				for (let c = 0; c < a; c++) s -= M[r * Amax + c] * M[a * Amax + c];
				M[r * Amax + a] = s / l;
			}
		}
		chol.push(M);
	}
	return { blocks, Amax, chol, singularFrom };
}

/**
 * Adds one left-out row's blocked PRESS for A = 1..Amax to press[1..Amax] (press[0] is the caller's: Σz²).
 * `t` holds the row's scores Pᵀz (length ≥ Amax). Scratch: u, y (Amax), s (Amax).
 */
export function blockedPressAccumulate(z: Float64Array, loadings: Float64Array, t: Float64Array, p: number, f: BlockFactors, press: Float64Array): void {
	const Amax = f.Amax;
	const u = new Float64Array(Amax);
	const y = new Float64Array(Amax);
	const s = new Float64Array(Amax);
	const K = f.blocks.start.length;
	for (let b = 0; b < K; b++) {
		const j0 = f.blocks.start[b];
		const j1 = f.blocks.end[b];
		const L = f.chol[b];
		// u = t − P_Bᵀ z_B
		for (let a = 0; a < Amax; a++) {
			let g = 0;
			for (let j = j0; j < j1; j++) g += loadings[a * p + j] * z[j];
			u[a] = t[a] - g;
		}
		// forward substitution L y = u is nested in A: y[0..A) depends on u[0..A) only
		const ok = Math.min(Amax, f.singularFrom[b] - 1);
		for (let a = 0; a < ok; a++) {
			let v = u[a];
			for (let c = 0; c < a; c++) v -= L[a * Amax + c] * y[c];
			y[a] = v / L[a * Amax + a];
		}
		for (let A = 1; A <= Amax; A++) {
			if (A > ok) {
				// the block carries a whole component: it cannot be predicted from the other variables
				press[A] += Infinity;
				continue;
			}
			// back substitution Lᵀ s = y on the leading A×A block
			for (let a = A - 1; a >= 0; a--) {
				let v = y[a];
				for (let c = a + 1; c < A; c++) v -= L[c * Amax + a] * s[c];
				s[a] = v / L[a * Amax + a];
			}
			let pr = 0;
			for (let j = j0; j < j1; j++) {
				let pred = 0;
				for (let a = 0; a < A; a++) pred += loadings[a * p + j] * s[a];
				const r = z[j] - pred;
				pr += r * r;
			}
			press[A] += pr;
		}
	}
}

/** The blocked definition computed literally: one least-squares solve per block (reference for tests). */
export function blockedPressDirect(z: ArrayLike<number>, loadings: Float64Array, A: number, p: number, blocks: VariableBlocks): number {
	let press = 0;
	for (let b = 0; b < blocks.start.length; b++) {
		const inB = (j: number) => j >= blocks.start[b] && j < blocks.end[b];
		// normal equations (P₋ᴮᵀP₋ᴮ) t̂ = P₋ᴮᵀ z₋ᴮ, solved by Gaussian elimination with partial pivoting
		const N = Array.from({ length: A }, () => new Array<number>(A + 1).fill(0));
		for (let j = 0; j < p; j++) {
			if (inB(j)) continue;
			for (let a = 0; a < A; a++) {
				for (let c = 0; c < A; c++) N[a][c] += loadings[a * p + j] * loadings[c * p + j];
				N[a][A] += loadings[a * p + j] * z[j];
			}
		}
		for (let c = 0; c < A; c++) {
			let piv = c;
			for (let r = c + 1; r < A; r++) if (Math.abs(N[r][c]) > Math.abs(N[piv][c])) piv = r;
			[N[c], N[piv]] = [N[piv], N[c]];
			for (let r = 0; r < A; r++) {
				if (r === c) continue;
				const fct = N[r][c] / N[c][c];
				for (let k = c; k <= A; k++) N[r][k] -= fct * N[c][k];
			}
		}
		const tHat = N.map((row, a) => row[A] / row[a]);
		for (let j = blocks.start[b]; j < blocks.end[b]; j++) {
			let pred = 0;
			for (let a = 0; a < A; a++) pred += tHat[a] * loadings[a * p + j];
			press += (z[j] - pred) ** 2;
		}
	}
	return press;
}
