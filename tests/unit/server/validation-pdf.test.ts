// The validation report as printed, read back with pdftotext (poppler-utils): the embedded font's own characters (a
// curly apostrophe prints as itself), the exclusions with their reasons, the distance and Coomans plots with decade
// ticks, times as on the certificate (with the zone), and no heading left alone at a page foot.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { validationPdf } from '../../../src/lib/server/reports/validation-pdf';
import type { PublicVersion, ReportExtras } from '../../../src/lib/server/services/model-versions';

const dir = mkdtempSync(join(tmpdir(), 'lotgate-report-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function version(warnings: number): PublicVersion {
	const model = (name: string, kind: string) => ({
		name,
		kind,
		n: 40,
		components: 3,
		componentsRule: 'auto',
		suggested: 3,
		alpha: 0.05,
		cCrit: 9.49,
		cvFalseRejectRate: 0.05,
		trainingFalseRejectRate: 0.025,
		explained: 0.99,
		frrByAlpha: [0.01, 0.05].map((alpha) => ({ alpha, cv: alpha, training: alpha / 2 })),
		warnings: Array.from({ length: warnings }, (_, i) => `Warning ${i + 1}: the analyst’s check of χ² at α = 0.05 is due.`)
	});
	return {
		label: 'LAC-200 v2',
		state: 'draft',
		builtBy: { id: 1, name: 'Chem Etrician' },
		createdAt: '2025-03-04T14:05:09.123Z',
		finishedAt: '2025-03-04T14:07:00.000Z',
		engineVersion: '1.0.0',
		artefactSha256: 'a'.repeat(64),
		approval: null,
		params: { recipe: 'snv', familyComponents: 'auto', components: 'auto', alpha: 0.05, familyAlpha: 0.01, gamma: 0.01, limits: 'cv', folds: 5, groupBy: 'supplier_lot', speLimit: 'jackson-mudholkar' },
		figures: { trainingCount: 80, excludedCount: 2, classes: [], models: [model('family', 'family'), model('lactose', 'genuine'), model('starch', 'suspect')] },
		validation: null,
		acceptance: null
	} as unknown as PublicVersion;
}

const extras: ReportExtras = {
	exclusions: [
		{ entryId: 17, label: 'lactose', sample: 'LAC-017.jdx', category: 'Instrument fault', reason: 'The probe’s window was fogged (operator’s note)' },
		{ entryId: 23, label: 'lactose', sample: null, category: 'Statistical outlier at γ', reason: 'c/c_crit 4.1 in the first build' }
	],
	distance: {
		model: 'lactose',
		nh: 3,
		nq: 4,
		cCrit: 9.49,
		cOutlier: 20,
		distances: 'cross-validated',
		// training near the centre, a challenge spectrum 300 times further out: more than two decades
		points: [
			...Array.from({ length: 30 }, (_, i) => ({ id: String(i), role: 'training', x: 0.05 + i * 0.05, y: 0.2 + (i % 5) * 0.2 })),
			{ id: 'c1', role: 'challenge', x: 300, y: 120 },
			{ id: 't1', role: 'test', x: 0.8, y: 1.1 }
		]
	},
	coomans: { x: 'lactose', y: 'starch', points: [{ id: '1', role: 'training', x: 0.4, y: 30 }, { id: 'c1', role: 'challenge', x: 60, y: 0.5 }] }
};

function text(pdf: Buffer, name: string, page?: number): string {
	const file = join(dir, `${name}.pdf`);
	writeFileSync(file, pdf);
	return execFileSync('/usr/bin/pdftotext', ['-layout', ...(page ? ['-f', String(page), '-l', String(page)] : []), file, '-'], { encoding: 'utf8' });
}
const pages = (pdf: Buffer, name: string) => {
	const file = join(dir, `${name}.pdf`);
	writeFileSync(file, pdf);
	const info = execFileSync('/usr/bin/pdfinfo', [file], { encoding: 'utf8' });
	return Number(/Pages:\s+(\d+)/.exec(info)![1]);
};

describe('validation report PDF', () => {
	it('prints a curly apostrophe as itself, never "?"', async () => {
		const t = text(await validationPdf(version(1), null, extras), 'apostrophe').replace(/\s+/g, ' ');
		expect(t).toContain('operator’s note');
		expect(t).toContain('analyst’s check');
		expect(t).not.toMatch(/operator\?s|analyst\?s/);
		// what the font lacks is spelled out, not boxed
		expect(t).toContain('alpha = 0.05');
	});

	it('lists the exclusions with their categories and reasons', async () => {
		const t = text(await validationPdf(version(0), null, extras), 'exclusions').replace(/\s+/g, ' ');
		expect(t).toContain('Spectra excluded from training (2)');
		expect(t).toMatch(/#17 lactose LAC-017\.jdx Instrument fault The probe’s window was fogged/);
		expect(t).toMatch(/#23 lactose - Statistical outlier at gamma c\/c_crit 4\.1 in the first build/);
	});

	it('says so when nothing is excluded', async () => {
		const t = text(await validationPdf(version(0), null, { ...extras, exclusions: [] }), 'none').replace(/\s+/g, ' ');
		expect(t).toContain('Spectra excluded from training (0) None: every training spectrum of the library is in this version.');
	});

	it('draws the distance and Coomans plots, on log axes with decade ticks, with every legend entry named', async () => {
		const t = text(await validationPdf(version(0), null, extras), 'plots');
		expect(t).toContain('Distance plot: lactose model (DD-SIMCA)');
		expect(t).toContain('Coomans plot: lactose against starch');
		expect(t).toContain('h/h0 (score distance) (log)');
		const flat = t.replace(/\s+/g, ' ');
		for (const tick of ['0.01', '0.1', '1', '10', '100', '1000']) expect(flat).toContain(` ${tick} `);
		expect(flat).not.toMatch(/1e[+-]?\d|1\.00e/);
		expect(flat).toContain('training (30)');
		expect(flat).toContain('challenge (1)');
		expect(flat).toContain('acceptance c_crit = 9.49');
		expect(flat).toContain('outlier c_out = 20.00');
		expect(flat).toContain('lactose limit (1)');
	});

	it('prints times as the certificate does, with the zone, never raw ISO', async () => {
		const utc = text(await validationPdf(version(0), null, extras), 'utc');
		expect(utc).toContain('2025-03-04 14:05:09 UTC');
		expect(utc).toContain('finished 2025-03-04 14:07:00 UTC');
		expect(utc).not.toContain('.123Z');
		const berlin = text(await validationPdf(version(0), null, extras, 'Europe/Berlin'), 'berlin');
		expect(berlin).toMatch(/2025-03-04 15:05:09 (CET|GMT\+1)/);
	});

	it('never leaves a heading or a table heading row alone at a page foot, however the content falls', { timeout: 180_000 }, async () => {
		const headings = [/^Build parameters$/, /^Models$/, /^Warnings from the build$/, /^Cross-validated false-reject rate/, /^Spectra excluded/, /^Distance plot:/, /^Coomans plot:/, /^Standards$/, /^Model\s+n\s+A \(rule\)/, /^Entry\s+Class\s+Sample/, /^Recipe\s+Components/];
		let checked = 0;
		for (const w of [0, 7, 14, 21, 28, 35]) {
			const pdf = await validationPdf(version(w), null, extras);
			const n = pages(pdf, `orphan-${w}`);
			for (let pg = 1; pg < n; pg++) {
				const lines = text(pdf, `orphan-${w}`, pg)
					.split('\n')
					.map((l) => l.trim())
					.filter(Boolean);
				const last = lines[lines.length - 1];
				checked++;
				for (const hd of headings) expect(hd.test(last), `page ${pg} of ${n} with ${w} warnings ends with "${last}"`).toBe(false);
			}
		}
		expect(checked).toBeGreaterThan(5);
	});
});
