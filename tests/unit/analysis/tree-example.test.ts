// docs/methods.md §21.0: the worked example of a tree decision is read from the document and run through the engine's
// own functions (DD-SIMCA statistic, χ² critical value, the level-1 table, the deeper one-class rule, the path name).
// Critical values: NIST/SEMATECH e-Handbook of Statistical Methods §1.3.6.7.4, upper critical values of the χ²
// distribution, 8 degrees of freedom: 15.507 (0.05) and 20.090 (0.01).
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { root } from './fixtures';
import { cCritical, ddStatistic } from '../../../src/lib/analysis/limits/ddsimca';
import { decide } from '../../../src/lib/analysis/classify';
import { decideOneClassLevel, describePath, type LevelEvidence } from '../../../src/lib/analysis/tree';
import type { ModelStats } from '../../../src/lib/analysis/projection';

const doc = readFileSync(join(root, 'docs/methods.md'), 'utf8');
const section = doc.slice(doc.indexOf('### 21.0'), doc.indexOf('### 21.1'));
const PAR = { h0: 3, v0: 0.02, nh: 3, nq: 5 };
const rows = section
	.split('\n')
	.filter((l) => /^\| (talc|none) \|/.test(l))
	.map((l) => {
		const [kase, node, model, h, v, c, cCrit, ratio, accepts] = l.split('|').slice(1, -1).map((x) => x.trim());
		return { kase, node, model, h: Number(h), v: Number(v), c: Number(c), cCrit: Number(cCrit), ratio: Number(ratio), accepts };
	});
const expected = section
	.slice(section.indexOf('```tree-example') + '```tree-example'.length, section.lastIndexOf('```'))
	.trim()
	.split('\n')
	.map((l) => JSON.parse(l) as { case: string; verdict: string; profile: string; path: string[]; name: string; reason: string | null });

const stats = (r: (typeof rows)[number]): ModelStats => {
	const c = ddStatistic(r.h, r.v, PAR);
	const cCrit = cCritical(PAR.nh + PAR.nq, r.model === 'family' ? 0.01 : 0.05);
	return { scores: [], t2: r.h, spe: r.v, h: r.h, v: r.v, c, t2Limit: NaN, speLimit: NaN, cCrit, cOutlier: Infinity, accepted: c <= cCrit };
};

describe('docs/methods.md §21.0 worked example of a tree decision', () => {
	it('the table has both cases and the critical values of the χ² table', () => {
		expect(rows).toHaveLength(8);
		expect(cCritical(8, 0.05)).toBeCloseTo(15.507, 3);
		expect(cCritical(8, 0.01)).toBeCloseTo(20.09, 3);
	});
	it.each(rows.map((r, i) => [i, r] as const))('row %i: c, c_crit, c/c_crit and acceptance as printed', (_, r) => {
		const s = stats(r);
		expect(s.c).toBeCloseTo(r.c, 10);
		expect(s.cCrit).toBeCloseTo(r.cCrit, 2);
		expect(Number((s.c / s.cCrit).toFixed(3))).toBe(r.ratio);
		expect(s.accepted ? 'yes' : 'no').toBe(r.accepts);
	});
	it.each(expected.map((e) => [e.case, e] as const))('case %s: verdict, path and name as printed', (kase, e) => {
		const mine = rows.filter((r) => r.kase === kase || (r.kase === 'talc' && (r.node === 'root' || r.node === 'level 1')));
		const family = stats(mine.find((r) => r.model === 'family')!);
		const level1 = mine.filter((r) => r.node === 'level 1').map((r) => ({ name: r.model, kind: (r.model === 'genuine' ? 'genuine' : 'suspect') as 'genuine' | 'suspect', stats: stats(r) }));
		const d = decide(family, level1);
		expect([d.verdict, d.profile]).toEqual([e.verdict, e.profile]);
		const path = [d.profile!];
		const levels: LevelEvidence[] = [{ node: [], method: 'one-class', children: level1.map((c) => c.name), stats: {}, accepted: [], classifier: null, chosen: d.profile, ambiguous: d.ambiguous, reason: d.reason }];
		const below = decideOneClassLevel(
			['diluted'],
			mine.filter((r) => r.node === 'diluted' && r.kase === kase).map((r) => ({ name: r.model, stats: stats(r) }))
		);
		levels.push({ method: 'one-class', classifier: null, ...below });
		if (below.chosen) path.push(below.chosen);
		expect(path).toEqual(e.path);
		expect(below.reason).toBe(e.reason);
		expect(describePath(d.verdict, path, levels)).toBe(e.name);
	});
});
