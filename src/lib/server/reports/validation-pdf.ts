// Validation report of a model version as PDF (pdfkit), set in the shipped Source Sans 3 WOFF files, never system fonts.
import PDFDocument from 'pdfkit';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { SCREENING_CAUTION } from '../../caution';
import type { PublicVersion } from '../services/model-versions';

const require = createRequire(import.meta.url);
// The package exports no font paths, but it does export its LICENSE, which sits beside files/.
const fontDir = () => join(dirname(require.resolve('@fontsource/source-sans-3/LICENSE')), 'files');
const FONT = { regular: 'source-sans-3-latin-400-normal.woff', semibold: 'source-sans-3-latin-600-normal.woff' };

const pct = (x: number | null | undefined) => (x == null || Number.isNaN(x) ? '-' : `${(x * 100).toFixed(1)} %`);
const ci = (i: { estimate: number | null; lower: number; upper: number }) => `${pct(i.estimate)} (${pct(i.lower)} to ${pct(i.upper)})`;
// The Latin subset has no Greek letters: spell them out rather than print empty boxes.
const latin = (s: string) => s.replace(/α/g, 'alpha').replace(/γ/g, 'gamma').replace(/[₀-₉]/g, (d) => String(d.charCodeAt(0) - 0x2080)).replace(/[^\u0000-\u024f]/g, '?');

/** `auditHead`: the audit trail's last event when the report is issued, printed so the report can be placed in the trail. */
export async function validationPdf(v: PublicVersion, auditHead: { seq: number; hash: string } | null = null): Promise<Buffer> {
	const doc = new PDFDocument({ size: 'A4', margin: 48, info: { Title: `Validation report ${v.label}`, Author: 'Lotgate', Subject: 'Model version validation' } });
	const dir = fontDir();
	doc.registerFont('body', join(dir, FONT.regular));
	doc.registerFont('bold', join(dir, FONT.semibold));
	const chunks: Buffer[] = [];
	doc.on('data', (c: Buffer) => chunks.push(c));
	const done = new Promise<Buffer>((resolve, reject) => {
		doc.on('end', () => resolve(Buffer.concat(chunks)));
		doc.on('error', reject);
	});
	const width = doc.page.width - 96;
	const h = (text: string, size = 13) => doc.moveDown(0.6).font('bold').fontSize(size).fillColor('#1f3a4d').text(latin(text)).moveDown(0.2).font('body').fontSize(10).fillColor('#1c2a33');
	const p = (text: string) => doc.font('body').fontSize(10).fillColor('#1c2a33').text(latin(text), { width });

	function table(headers: string[], rows: string[][], widths?: number[]) {
		const w = widths ?? headers.map(() => width / headers.length);
		const rowHeight = (cells: string[], font: string) => {
			doc.font(font).fontSize(9);
			return Math.max(...cells.map((c, i) => doc.heightOfString(latin(c), { width: w[i] - 6 }))) + 6;
		};
		const drawRow = (cells: string[], font: string, shade: boolean) => {
			const height = rowHeight(cells, font);
			if (doc.y + height > doc.page.height - 60) doc.addPage();
			const y = doc.y;
			if (shade) doc.rect(48, y, width, height).fill('#e3ebf0');
			let x = 48;
			doc.fillColor('#1c2a33').font(font).fontSize(9);
			cells.forEach((c, i) => {
				doc.text(latin(c), x + 3, y + 3, { width: w[i] - 6 });
				x += w[i];
			});
			doc.moveTo(48, y + height).lineTo(48 + width, y + height).strokeColor('#d9d4c7').lineWidth(0.5).stroke();
			doc.x = 48;
			doc.y = y + height;
		};
		drawRow(headers, 'bold', true);
		rows.forEach((r) => drawRow(r, 'body', false));
		doc.moveDown(0.5);
	}

	doc.font('bold').fontSize(18).fillColor('#1f3a4d').text(latin(`Validation report: ${v.label}`));
	p(`State: ${v.state}. Built by ${v.builtBy.name} on ${v.createdAt}${v.finishedAt ? `, finished ${v.finishedAt}` : ''}. Engine ${v.engineVersion ?? '-'}.`);
	p(`Artefact sha256: ${v.artefactSha256 ?? '-'}`);
	if (v.approval) p(`Approved: ${v.approval.signerName}, ${v.approval.signedAt}, meaning "${v.approval.meaning}", reason: ${v.approval.reason}. Record hash ${v.approval.recordHash}.`);
	else p('Not approved.');

	h('Build parameters');
	const pr = v.params;
	table(
		['Recipe', 'Components (family / classes)', 'alpha / family alpha / gamma', 'Limits, folds, grouping', 'SPE limit'],
		[[pr.recipe, `${pr.familyComponents} / ${pr.components}`, `${pr.alpha} / ${pr.familyAlpha} / ${pr.gamma}`, `${pr.limits}, ${pr.folds} folds, by ${pr.groupBy}`, pr.speLimit]]
	);

	h('Models');
	table(
		['Model', 'n', 'A (rule)', 'c_crit', 'CV false-reject', 'Fitted false-reject', 'alpha'],
		(v.figures?.models ?? []).map((m) => [m.name === 'family' ? 'family (stage 1)' : `${m.name} (${m.kind})`, String(m.n), `${m.components} (${m.componentsRule}, suggested ${m.suggested})`, m.cCrit.toFixed(2), pct(m.cvFalseRejectRate), pct(m.trainingFalseRejectRate), String(m.alpha)])
	);

	const warnings = (v.figures?.models ?? []).flatMap((m) => m.warnings ?? []);
	if (warnings.length) {
		h('Warnings from the build');
		for (const w of warnings) p(`- ${w.replace(/χ²/g, 'chi-square').replace(/N_h/g, 'N_h').replace(/N_q/g, 'N_q')}`);
	}

	h('Cross-validated false-reject rate against alpha');
	const grid = v.figures?.models[0]?.frrByAlpha.map((f) => f.alpha) ?? [];
	table(['Model', ...grid.map((a) => `alpha = ${a}`)], (v.figures?.models ?? []).map((m) => [m.name, ...m.frrByAlpha.map((f) => pct(f.cv))]));

	const report = v.validation?.report;
	h('Confusion matrix (test and challenge spectra)');
	if (report) {
		p(`${v.validation!.testCount} test and ${v.validation!.challengeCount} challenge spectra, none used in training. Rows: labelled class; columns: the single accepting class model, several, or none.`);
		doc.moveDown(0.3);
		const rows = report.classes.map((c, i) => [c, ...report.confusion[i].map(String)]);
		if (report.alienRow.some((n) => n > 0)) rows.push(['aliens (no class)', ...report.alienRow.map(String)]);
		table(['labelled / accepted by', ...report.columns], rows);
		h('Per class (95 % Clopper-Pearson intervals)');
		table(
			['Class model', 'TP', 'FN', 'TN', 'FP', 'Sensitivity', 'Specificity'],
			report.perClass.map((c) => [c.className, String(c.tp), String(c.fn), String(c.tn), String(c.fp), ci(c.sensitivity), ci(c.specificity)]),
			[100, 35, 35, 35, 35, (width - 240) / 2, (width - 240) / 2]
		);
	} else {
		p('WARNING: this version has no test or challenge set. USP <1039> Chemometrics expects validation on independent data, and USP <856>/<1856> (near-infrared spectroscopy) expect the library to be challenged with closely related materials.');
	}

	if (report?.verdictLevel) {
		h('Per verdict (what the user sees; 95 % Clopper-Pearson intervals)');
		p('Verdict level: a spectrum counts for a class only when its verdict names that class; a genuine spectrum called suspect is a miss for genuine. The table above is at class-model level.');
		table(
			['Class', 'TP', 'FN', 'TN', 'FP', 'Sensitivity', 'Specificity'],
			report.verdictLevel.map((c) => [c.className, String(c.tp), String(c.fn), String(c.tn), String(c.fp), ci(c.sensitivity), ci(c.specificity)]),
			[100, 35, 35, 35, 35, (width - 240) / 2, (width - 240) / 2]
		);
	}
	const tree = v.validation?.tree;
	if (tree && tree.nodes.length > 1) {
		h('Per node of the model tree');
		p('Rows: the child a held-out spectrum is labelled with, then spectra that reached the node but belong elsewhere. Columns: the child chosen, none of these, or stopped above (the walk ended at a higher node).');
		for (const n of tree.nodes) {
			doc.moveDown(0.3);
			p(`${n.node.length ? n.node.join(' > ') : 'First level (after the family model)'}: ${n.method}, ${n.correct} of ${n.expected} to the labelled child.`);
			table(['labelled / chosen', ...n.columns], n.rows.map((r, i) => [r, ...n.counts[i].map(String)]));
		}
		h('Whole path');
		table(['labelled / named', ...tree.path.columns.map((c) => c.replaceAll('/', ' > '))], tree.path.rows.map((r, i) => [r.replaceAll('/', ' > '), ...tree.path.counts[i].map(String)]));
	}
	const disc = v.validation?.discriminants;
	if (disc) {
		h('One-class models against closed-set classifiers (PLS-DA, kNN)');
		p(`Trained on the same training spectra with the same recipe (${disc.recipe}), classifying the same test and challenge spectra at the first level; components and k by cross-validation. Second-line evidence only.`);
		const g = disc.genuine ?? 'genuine';
		const choice = (c: { method: string; chosen: number }) => (c.method === 'plsda' ? `${c.chosen} latent variables` : `k = ${c.chosen}`);
		table(
			['Method', 'Cross-validated choice', 'Test spectra named correctly', `Challenge spectra called ${g}`],
			[
				['one-class models (this version)', '-', `${disc.oneClass.correct} of ${disc.oneClass.known}`, `${disc.oneClass.aliensCalledGenuine} of ${disc.oneClass.aliens}`],
				...disc.classifiers.map((c) => [c.method === 'plsda' ? 'PLS-DA' : 'kNN', choice(c), `${c.correct} of ${c.known}`, `${c.aliensCalledGenuine} of ${c.aliens}`])
			]
		);
		if (disc.oneClass.aliens > 0)
			p(
				`A closed-set classifier assigns every challenge spectrum to some class. Of ${disc.oneClass.aliens} challenge spectra, ${disc.classifiers.map((c) => `${c.method === 'plsda' ? 'PLS-DA' : 'kNN'} would have called ${c.aliensCalledGenuine} ${g}`).join(', ')}; the one-class models called ${disc.oneClass.aliensCalledGenuine}.`
			);
		for (const c of disc.classifiers) {
			doc.moveDown(0.3);
			p(`${c.method === 'plsda' ? 'PLS-DA' : 'kNN'} (${choice(c)}). Cross-validated misclassification: ${c.candidates.map((k, i) => `${c.method === 'plsda' ? 'A' : 'k'} = ${k}: ${pct(c.cvError[i])}`).join(', ')}.`);
			table(['labelled / assigned', ...c.columns], c.rows.map((r, i) => [r, ...c.counts[i].map(String)]));
		}
	}
	if (v.acceptance) {
		const a = v.acceptance;
		h(`Acceptance criteria: ${a.met ? 'all met' : 'NOT met'}`);
		p(`${a.criteriaRevision === null ? 'Default criteria (common practice)' : `Criteria revision ${a.criteriaRevision}`}, tied to USP <1039> (validation on independent data) and ICH Q2(R2) specificity.`);
		table(['Criterion', 'Observed', 'Required', 'Result'], a.criteria.map((c) => [c.label, c.observed, c.required, c.met ? 'met' : 'NOT met']), [width * 0.4, width * 0.3, width * 0.15, width * 0.15]);
	}

	h('Standards');
	p('Lifecycle per USP <1039> Chemometrics (development, validation, monitoring, update): this version is frozen with its parent, parameters, training membership and exclusions. Challenge set per USP <856>/<1856> (near-infrared spectroscopy). Electronic signature per 21 CFR 11.50/11.70.');
	doc.moveDown(1);
	doc.font('body').fontSize(9).fillColor('#5b6770').text(latin(SCREENING_CAUTION), { width });
	if (auditHead) doc.moveDown(0.5).text(`Audit trail at issue: event #${auditHead.seq}, head ${auditHead.hash}`, { width });
	doc.end();
	return done;
}
