// One label for a container and one wording for a verdict everywhere people read them (issue 17, item 17).
import { describe, expect, it } from 'vitest';
import { containerLabel, verdictWord } from '../../src/lib/labels';

describe('labels', () => {
	it('containers are C01 … C99, C100', () => {
		expect(containerLabel(1)).toBe('C01');
		expect(containerLabel(12)).toBe('C12');
		expect(containerLabel(100)).toBe('C100');
	});
	it('verdicts in words, a suspect with its profile', () => {
		expect(verdictWord('not-this-material')).toBe('not this material');
		expect(verdictWord('not-screened')).toBe('not screened');
		expect(verdictWord('suspect', 'diluted-starch')).toBe('suspect (diluted-starch)');
		expect(verdictWord(null)).toBe('—');
	});
});
