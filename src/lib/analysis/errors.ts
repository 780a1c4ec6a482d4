/** Error raised by the analysis engine; `code` is stable for callers, `message` is for people. */
export class AnalysisError extends Error {
	readonly code: string;
	constructor(code: string, message: string) {
		super(message);
		this.name = 'AnalysisError';
		this.code = code;
	}
}
