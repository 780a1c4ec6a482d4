// jstat ships no types; only the distribution functions the engine uses are declared.
declare module 'jstat' {
	interface ContinuousDistribution {
		inv(p: number, ...params: number[]): number;
		cdf(x: number, ...params: number[]): number;
	}
	const jStat: {
		centralF: ContinuousDistribution;
		chisquare: ContinuousDistribution;
		normal: ContinuousDistribution;
		beta: ContinuousDistribution;
		binomial: { cdf(k: number, n: number, p: number): number; pdf(k: number, n: number, p: number): number };
		quantiles(values: number[], probabilities: number[], alphap?: number, betap?: number): number[];
	};
	export default jStat;
}
