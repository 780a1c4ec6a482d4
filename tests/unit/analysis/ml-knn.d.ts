// ml-knn ships no types; only what the reference comparison uses is declared.
declare module 'ml-knn' {
	export default class KNN {
		constructor(dataset: number[][], labels: string[], options?: { k?: number });
		predict(x: number[]): string;
		predict(x: number[][]): string[];
	}
}
