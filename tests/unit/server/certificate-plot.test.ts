// The certificate's distance plot as printed: container labels never overprint (checked on the PDF's own word boxes,
// read back with pdftotext -bbox from poppler-utils), and containers beyond the axes are listed in a note under the plot.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { renderCertificate, type CertificateContent } from '../../../src/lib/server/reports/certificate-pdf';
import { containerLabel } from '../../../src/lib/labels';

const dir = mkdtempSync(join(tmpdir(), 'lotgate-cert-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function content(lot: { container: number; x: number; y: number; verdict: string }[]): CertificateContent {
	return {
		schema: 1,
		number: 'CERT-TEST-1',
		timeZone: 'UTC',
		issuedAt: '2025-03-04T14:05:09.000Z',
		issuedAtText: '2025-03-04 14:05:09 UTC',
		lot: {
			id: 1,
			internalLot: 'L-TEST-1',
			material: { code: 'LAC-200', name: 'Lactose monohydrate', technique: 'NIR' },
			supplier: { code: 'NORDVIK', name: 'Nordvik', status: 'approved' },
			supplierLot: 'S-1',
			containers: 40,
			receivedAt: '2025-03-04'
		},
		plan: { label: 'every container', count: lot.length, containers: 40, formula: 'n = N', basis: 'common practice', justification: null, seed: 1, sampled: lot.map((p) => p.container) },
		model: { label: 'LAC-200 v2', artefactSha256: 'a'.repeat(64), engineVersion: '1' },
		identity: 'fails',
		identitySummary: 'fails',
		containers: [],
		plot: {
			model: 'genuine',
			cCrit: 10,
			cOutlier: 20,
			// a training cloud inside the acceptance area
			training: Array.from({ length: 60 }, (_, i) => [1 + ((i * 37) % 50) / 10, 1 + ((i * 53) % 30) / 10] as [number, number]),
			lot
		},
		disposition: { id: 1, decision: 'quarantine', decisionText: 'quarantine', recordHash: 'b'.repeat(64), supersedes: null, twoPersonRule: false },
		signatures: [],
		caution: 'Screening supports, but does not replace, the approved procedures.'
	};
}

interface Word {
	text: string;
	xMin: number;
	yMin: number;
	xMax: number;
	yMax: number;
}
function words(pdf: Buffer, name: string): { text: string; boxes: Word[] } {
	const file = join(dir, `${name}.pdf`);
	writeFileSync(file, pdf);
	const text = execFileSync('/usr/bin/pdftotext', ['-layout', file, '-'], { encoding: 'utf8' });
	const html = execFileSync('/usr/bin/pdftotext', ['-bbox', file, '-'], { encoding: 'utf8' });
	const boxes = [...html.matchAll(/<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)<\/word>/g)].map((m) => ({
		xMin: +m[1],
		yMin: +m[2],
		xMax: +m[3],
		yMax: +m[4],
		text: m[5]
	}));
	return { text, boxes };
}
const overlap = (a: Word, b: Word) => a.xMin < b.xMax - 0.2 && b.xMin < a.xMax - 0.2 && a.yMin < b.yMax - 0.2 && b.yMin < a.yMax - 0.2;

describe('certificate distance plot', () => {
	// Twelve containers in one cluster (containers 11-22), two far beyond the axes (31, 32), one on scale apart (5).
	const cluster = Array.from({ length: 12 }, (_, i) => ({ container: 11 + i, x: 4 + (i % 4) * 0.05, y: 3 + Math.floor(i / 4) * 0.05, verdict: 'genuine' }));
	const lot = [...cluster, { container: 5, x: 14, y: 12, verdict: 'suspect' }, { container: 31, x: 900, y: 40, verdict: 'not-this-material' }, { container: 32, x: 700, y: 800, verdict: 'not-this-material' }];

	it('prints every on-scale container label once, none overlapping another', async () => {
		const { boxes } = words(await renderCertificate(content(lot)), 'cluster');
		const labels = ['C05', ...cluster.map((c) => containerLabel(c.container))];
		// The plot's labels are the containers as the table names them (C05), between its heading and its x-axis title.
		const top = boxes.find((b) => b.text === 'Distance')!.yMax;
		const bottom = boxes.find((b) => b.text === 'score')!.yMin;
		const found = labels.map((l) => boxes.filter((b) => b.text === l && b.yMin > top && b.yMax < bottom));
		found.forEach((f, i) => expect(f.length, `label ${labels[i]}`).toBe(1));
		const flat = found.map((f) => f[0]);
		for (let i = 0; i < flat.length; i++) for (let j = i + 1; j < flat.length; j++) expect(overlap(flat[i], flat[j]), `${flat[i].text} and ${flat[j].text}`).toBe(false);
	});

	it('lists off-scale containers in a note under the plot instead of one shared corner marker', async () => {
		const { text, boxes } = words(await renderCertificate(content(lot)), 'note');
		const flat = text.replace(/\s+/g, ' ');
		expect(flat).toContain('Off scale, not drawn (beyond 32.0 on an axis): container C31 (not this material; Nh·h/h0 = 900.0, Nq·v/v0 = 40.0); container C32 (not this material; Nh·h/h0 = 700.0, Nq·v/v0 = 800.0).');
		// No "(off scale)" labels inside the plot any more.
		expect(flat).not.toContain('(off scale)');
		// The note sits below the plot's x-axis title.
		const axis = boxes.find((b) => b.text === 'score')!;
		const note = boxes.find((b) => b.text === 'Off')!;
		expect(note.yMin).toBeGreaterThan(axis.yMax);
	});

	it('draws no note when every container is on scale', async () => {
		const { text } = words(await renderCertificate(content(cluster)), 'nonote');
		expect(text).not.toContain('Off scale');
	});
});
