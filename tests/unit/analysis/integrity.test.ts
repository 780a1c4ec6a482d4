import { beforeAll, describe, expect, test } from 'vitest';
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import { AnalysisError, buildModel, parseArtefact, prepareArtefact, screen, sealArtefact, serializeArtefact, type ModelArtefact } from '../../../src/lib/analysis';
import { alphaRefusal } from '../../../src/lib/analysis/alpha-bounds';
import { iris } from './fixtures';

// Issue 12 §2: an artefact carries the SHA-256 of its canonical content (RFC 8785) without the integrity field, and
// every derivable quantity is recomputed on load.

describe('artefact integrity (iris, Fisher 1936, as a small class-model set)', () => {
	let text: string;
	let a: ModelArtefact;
	const fresh = () => JSON.parse(text) as ModelArtefact & Record<string, unknown>;
	beforeAll(() => {
		a = buildModel(iris(), { genuine: 'setosa', recipe: 'autoscale' });
		text = serializeArtefact(a);
	});

	test('the integrity field is the SHA-256 of the canonical JSON without it, computed independently here', () => {
		const o = fresh();
		const { integrity, ...rest } = o;
		// canonicalize straight from the package (RFC 8785), hashed with node:crypto: not the engine's own helper
		const expected = createHash('sha256').update(canonicalize(rest)!).digest('hex');
		expect(integrity).toBe(expected);
		expect(() => parseArtefact(text)).not.toThrow();
	});

	test('a hand edit is refused with a clear message, and a missing field too', () => {
		const o = fresh();
		o.models.setosa.cCrit = 1e9;
		expect(() => parseArtefact(JSON.stringify(o))).toThrow(/integrity check failed: .*changed after it was built/);
		const { integrity: _i, ...noField } = fresh();
		expect(() => parseArtefact(JSON.stringify(noField))).toThrow(/integrity field missing/);
		// version 1 predates the field: it loads only while every derivable quantity recomputes (next test)
		const { integrity: _j, splits: _s, ...v1 } = { ...fresh(), schemaVersion: 1 };
		expect(() => parseArtefact(JSON.stringify(v1))).not.toThrow();
		v1.models.setosa.cCrit = 1e9;
		expect(() => parseArtefact(JSON.stringify(v1))).toThrow(/models\["setosa"\]\.cCrit is 1000000000 but recomputes to/);
	});

	test('re-sealing a tampered c_crit does not help: c_crit is recomputed from χ²(N_h + N_q) and refused', () => {
		const o = fresh();
		o.models.setosa.cCrit = 1e9;
		const resealed = JSON.stringify(sealArtefact(o));
		expect(() => parseArtefact(resealed)).toThrow(AnalysisError);
		expect(() => parseArtefact(resealed)).toThrow(/models\["setosa"\]\.cCrit is 1000000000 but recomputes to/);
	});

	test('other derivable quantities: c_out, T² limit, SPE limit, h₀ and scales', () => {
		const edits: [string, (o: ModelArtefact) => void, RegExp][] = [
			['cOutlier', (o) => (o.family.cOutlier *= 2), /family\.cOutlier is .* recomputes/],
			['t2Limit', (o) => (o.models.versicolor.limits.t2Limit += 1), /limits\.t2Limit is .* recomputes/],
			['speLimit', (o) => ((o.models.virginica.limits.speLimit as number) *= 10), /limits\.speLimit is .* recomputes/],
			['spe.box', (o) => (o.family.limits.spe.box *= 3), /limits\.spe\.box is .* recomputes/],
			['h0', (o) => (o.family.h0 *= 1.5), /family\.h0 is .* recomputes/],
			['nq', (o) => (o.family.nq += 5), /family\.nq is .* recomputes/],
			['scale', (o) => (o.models.setosa.scale[0] = 0), /scale must be positive/],
			['v0', (o) => (o.models.setosa.v0 = -1), /v0 must be positive/],
			['theta1', (o) => (o.family.limits.theta[0] *= 2), /theta\[0\] is .* recomputes/]
		];
		for (const [name, edit, message] of edits) {
			const o = fresh();
			edit(o);
			expect(() => parseArtefact(JSON.stringify(sealArtefact(o))), name).toThrow(message);
		}
	});

	test('prepareArtefact (the server and CLI path) refuses a tampered artefact object too', () => {
		const o = fresh();
		o.models.setosa.cCrit = 1e9;
		expect(() => prepareArtefact(o)).toThrow(/integrity check failed/);
		const ok = fresh();
		expect(screen(prepareArtefact(ok), { ...iris()[0] }).verdict).toBe('genuine');
	});
});

describe('α bounds for identity use (issue 12: class [0.001, 0.1], family [0.001, 0.05])', () => {
	test('refused at build time with the reason', () => {
		expect(() => buildModel(iris(), { genuine: 'setosa', recipe: 'autoscale', alpha: 0.0001 })).toThrow(/class α 0.0001 is below 0.001: a very small α widens the acceptance area/);
		expect(() => buildModel(iris(), { genuine: 'setosa', recipe: 'autoscale', alpha: 0.2 })).toThrow(/class α 0.2 is above 0.1/);
		expect(() => buildModel(iris(), { genuine: 'setosa', recipe: 'autoscale', familyAlpha: 0.1 })).toThrow(/family α 0.1 is above 0.05/);
	});
	test('the ends of each interval are allowed', () => {
		expect(alphaRefusal('class', 0.001)).toBeNull();
		expect(alphaRefusal('class', 0.1)).toBeNull();
		expect(alphaRefusal('family', 0.05)).toBeNull();
		expect(alphaRefusal('family', 0.0009)).toMatch(/widens/);
	});
	test('an artefact whose α is outside the bounds is refused on load even when its hash and limits agree', () => {
		const built = buildModel(iris(), { genuine: 'setosa', recipe: 'autoscale' });
		const o = JSON.parse(serializeArtefact(built)) as ModelArtefact;
		o.models.setosa.alpha = 1e-6;
		expect(() => parseArtefact(JSON.stringify(sealArtefact(o)))).toThrow(/class α 0.000001 is below 0.001|class α 1e-6 is below 0.001/);
	});
});
