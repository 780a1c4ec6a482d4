// The words and labels people read, the same on every screen, certificate, report and mail: a container is "C04"
// (never "4" in one place and "C04" in another), and a verdict is written in words ("not this material"), never as
// its stored key ("not-this-material").

/** "C04": a container's number with its letter, two digits at least (C100 stays C100). */
export function containerLabel(n: number): string {
	return `C${String(n).padStart(2, '0')}`;
}

const VERDICT_WORDS: Record<string, string> = {
	genuine: 'genuine',
	suspect: 'suspect',
	unknown: 'unknown',
	'not-this-material': 'not this material',
	unusable: 'unusable',
	'not-screened': 'not screened',
	'awaiting-scan': 'awaiting scan',
	drift: 'drift signal'
};

/** A stored verdict key in words; a suspect verdict names its profile: "suspect (diluted-starch)". */
export function verdictWord(verdict: string | null | undefined, profile?: string | null): string {
	if (!verdict) return '—';
	const word = VERDICT_WORDS[verdict] ?? verdict.replace(/-/g, ' ');
	return profile ? `${word} (${profile})` : word;
}
