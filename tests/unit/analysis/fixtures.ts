import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { dirname, resolve } from 'node:path';
import type { TrainingSpectrum } from '../../../src/lib/analysis';

export const root = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');
export const fixture = (name: string) => resolve(root, 'fixtures/open', name);

/** Gasoline NIR (Kalivas 1997, via R package pls): 60 × 401, 900–1700 nm. */
export function gasoline(): { ids: string[]; axis: number[]; X: number[][]; octane: number[] } {
	const lines = readFileSync(fixture('gasoline_nir.csv'), 'utf8').trim().split(/\r?\n/);
	const head = lines[0].split(',').map((s) => s.replace(/"/g, ''));
	const axis = head.slice(2).map(Number);
	const rows = lines.slice(1).map((l) => l.split(',').map((s) => s.replace(/"/g, '')));
	return { ids: rows.map((r) => r[0]), octane: rows.map((r) => Number(r[1])), axis, X: rows.map((r) => r.slice(2).map(Number)) };
}

export function gasolineTraining(label?: (i: number) => string | null): TrainingSpectrum[] {
	const g = gasoline();
	return g.X.map((x, i) => ({ id: g.ids[i], axis: g.axis, values: x, unit: 'nm' as const, className: label ? label(i) : null }));
}

export const prcomp = (): { sdev: number[]; proportion_of_variance: number[]; scores_pc1_pc3: number[][] } =>
	JSON.parse(readFileSync(fixture('gasoline_prcomp.json'), 'utf8'));

/** Fisher's iris (scikit-learn copy): 4 measurements as a 4-point "spectrum" on a dummy axis 1..4. */
export function iris(): TrainingSpectrum[] {
	const lines = readFileSync(fixture('iris.csv'), 'utf8').trim().split(/\r?\n/).slice(1);
	return lines.map((l) => {
		const c = l.split(',');
		return { id: c[0], className: c[1], axis: [1, 2, 3, 4], values: c.slice(2).map(Number), unit: 'nm' as const };
	});
}

export function centred(X: number[][]): { data: Float64Array; rows: number; cols: number } {
	const n = X.length;
	const p = X[0].length;
	const data = new Float64Array(n * p);
	for (let j = 0; j < p; j++) {
		let m = 0;
		for (let i = 0; i < n; i++) m += X[i][j];
		m /= n;
		for (let i = 0; i < n; i++) data[i * p + j] = X[i][j] - m;
	}
	return { data, rows: n, cols: p };
}

export const relErr = (a: number, b: number) => Math.abs(a - b) / Math.max(Math.abs(b), 1e-300);
