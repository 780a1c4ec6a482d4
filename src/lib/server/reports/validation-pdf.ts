// Validation report of a model version as PDF (pdfkit), set in the shipped Source Sans 3 WOFF files, never system fonts.
import PDFDocument from 'pdfkit';
import { SCREENING_CAUTION } from '../../caution';
import { boundaryCurve } from '../../components/charts/chart-kit';
import { DEFAULT_TIME_ZONE, formatZoned } from '../../signature-time';
import type { PublicVersion, ReportExtras } from '../services/model-versions';
import { printable, reportFonts } from './pdf-fonts';
import { scatterPlot } from './pdf-plot';

const pct = (x: number | null | undefined) => (x == null || Number.isNaN(x) ? '-' : `${(x * 100).toFixed(1)} %`);
const ci = (i: { estimate: number | null; lower: number; upper: number }) => `${pct(i.estimate)} (${pct(i.lower)} to ${pct(i.upper)})`;
const latin = printable;

/**
 * `auditHead`: the audit trail's last event when the report is issued, printed so the report can be placed in the trail.
 * `extras`: the exclusions and plots (reportExtras); `timeZone`: the zone every time is printed in, as on the certificate.
 */
export async function validationPdf(
	v: PublicVersion,
	auditHead: { seq: number; hash: string } | null = null,
	extras: ReportExtras | null = null,
	timeZone = DEFAULT_TIME_ZONE
): Promise<Buffer> {
	const doc = new PDFDocument({ size: 'A4', margin: 48, info: { Title: `Validation report ${v.label}`, Author: 'Lotgate', Subject: 'Model version validation' } });
	const fonts = reportFonts();
	doc.registerFont('body', fonts.regular);
	doc.registerFont('bold', fonts.semibold);
	const at = (iso: string | null | undefined) => (iso ? formatZoned(iso, timeZone) : '-');
	const chunks: Buffer[] = [];
	doc.on('data', (c: Buffer) => chunks.push(c));
	const done = new Promise<Buffer>((resolve, reject) => {
		doc.on('end', () => resolve(Buffer.concat(chunks)));
		doc.on('error', reject);
	});
	const width = doc.page.width - 96;
	const bottom = () => doc.page.height - 60;
	// A heading keeps with what follows it (keep-with-next): when the heading and `keep` points of what follows do not
	// fit on this page, the heading starts the next one, so no heading is left alone at a page foot.
	const h = (text: string, size = 13, keep = 56) => {
		doc.font('bold').fontSize(size);
		const height = doc.heightOfString(latin(text), { width }) + size * 0.8;
		if (doc.y + height + keep > bottom()) doc.addPage();
		else doc.moveDown(0.6);
		return doc.font('bold').fontSize(size).fillColor('#1f3a4d').text(latin(text), 48, doc.y, { width }).moveDown(0.2).font('body').fontSize(10).fillColor('#1c2a33');
	};
	const p = (text: string) => doc.font('body').fontSize(10).fillColor('#1c2a33').text(latin(text), { width });

	function table(headers: string[], rows: string[][], widths?: number[]) {
		const w = widths ?? headers.map(() => width / headers.length);
		const rowHeight = (cells: string[], font: string) => {
			doc.font(font).fontSize(9);
			return Math.max(...cells.map((c, i) => doc.heightOfString(latin(c), { width: w[i] - 6 }))) + 6;
		};
		const drawRow = (cells: string[], font: string, shade: boolean) => {
			const height = rowHeight(cells, font);
			if (doc.y + height > bottom()) {
				doc.addPage();
				// a table that runs on repeats its heading row
				if (!shade) drawRow(headers, 'bold', true);
			}
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
		// the heading row never stands alone at a page foot: it moves with the first row
		if (doc.y + rowHeight(headers, 'bold') + (rows[0] ? rowHeight(rows[0], 'body') : 0) > bottom()) doc.addPage();
		drawRow(headers, 'bold', true);
		rows.forEach((r) => drawRow(r, 'body', false));
		doc.moveDown(0.5);
	}

	doc.font('bold').fontSize(18).fillColor('#1f3a4d').text(latin(`Validation report: ${v.label}`));
	p(`State: ${v.state}. Built by ${v.builtBy.name} on ${at(v.createdAt)}${v.finishedAt ? `, finished ${at(v.finishedAt)}` : ''}. Engine ${v.engineVersion ?? '-'}.`);
	p(`Artefact sha256: ${v.artefactSha256 ?? '-'}`);
	if (v.approval) p(`Approved: ${v.approval.signerName}, ${at(v.approval.signedAt)}, meaning "${v.approval.meaning}", reason: ${v.approval.reason}. Record hash ${v.approval.recordHash}.`);
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
		for (const w of warnings) p(`- ${w.replace(/χ²/g, 'chi-square')}`);
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

	if (extras) {
		h(`Spectra excluded from training (${extras.exclusions.length})`);
		if (extras.exclusions.length)
			table(
				['Entry', 'Class', 'Sample or file', 'Category', 'Reason'],
				extras.exclusions.map((e) => [`#${e.entryId}`, e.label, e.sample ?? '-', e.category, e.reason || '(no reason recorded)']),
				[40, 60, 100, 115, width - 315]
			);
		else p('None: every training spectrum of the library is in this version.');

		const plotHeight = 200;
		if (extras.distance) {
			const d = extras.distance;
			h(`Distance plot: ${d.model} model (DD-SIMCA)`, 13, plotHeight + 60);
			p(`Training distances are ${d.distances}; test and challenge spectra were not used in training. Inside the solid line (Nh·h/h0 + Nq·v/v0 <= c_crit) the model accepts; beyond the dashed line a training spectrum is an outlier.`);
			const byRole = (role: string) => d.points.filter((x) => x.role === role);
			const top0 = doc.y;
			const used = scatterPlot(
				doc,
				{
					xLabel: 'h/h0 (score distance)',
					yLabel: 'v/v0 (orthogonal distance)',
					series: [
						{ label: 'training', points: byRole('training'), shape: 'dot', color: '#7b8790' },
						{ label: 'test', points: byRole('test'), shape: 'circle', color: '#0072B2' },
						{ label: 'challenge', points: byRole('challenge'), shape: 'triangle', color: '#D55E00' }
					],
					guides: [
						{ label: `acceptance c_crit = ${d.cCrit.toFixed(2)}`, points: boundaryCurve(d.cCrit, d.nh, d.nq, true), color: '#2e6b3f' },
						...(d.cOutlier ? [{ label: `outlier c_out = ${d.cOutlier.toFixed(2)}`, points: boundaryCurve(d.cOutlier, d.nh, d.nq, true), color: '#a3262a', dash: true }] : [])
					],
					include: { x: [(d.cOutlier ?? d.cCrit) / d.nh], y: [(d.cOutlier ?? d.cCrit) / d.nq] },
					linearCap: 3
				},
				{ x: 48, y: top0 + 4, width: Math.min(width, 420), height: plotHeight }
			);
			doc.x = 48;
			doc.y = top0 + 4 + used + 8;
		}
		if (extras.coomans) {
			const c = extras.coomans;
			h(`Coomans plot: ${c.x} against ${c.y}`, 13, plotHeight + 60);
			p(`c / c_crit under each class model; below 1 on an axis, that model accepts. Left of the vertical line ${c.x} accepts; below the horizontal line ${c.y} accepts.`);
			const byRole = (role: string) => c.points.filter((x) => x.role === role);
			const top = 1e6; // the lines run past the axes; the plot clips them
			const top0 = doc.y;
			const used = scatterPlot(
				doc,
				{
					xLabel: `c / c_crit, ${c.x}`,
					yLabel: `c / c_crit, ${c.y}`,
					series: [
						{ label: 'training', points: byRole('training'), shape: 'dot', color: '#7b8790' },
						{ label: 'test', points: byRole('test'), shape: 'circle', color: '#0072B2' },
						{ label: 'challenge', points: byRole('challenge'), shape: 'triangle', color: '#D55E00' }
					],
					guides: [
						{ label: `${c.x} limit (1)`, points: [{ x: 1, y: 1e-4 }, { x: 1, y: top }], color: '#1f3a4d', dash: true },
						{ label: `${c.y} limit (1)`, points: [{ x: 1e-4, y: 1 }, { x: top, y: 1 }], color: '#8a3d00', dash: true }
					],
					include: { x: [1, 2], y: [1, 2] },
					linearCap: 5
				},
				{ x: 48, y: top0 + 4, width: Math.min(width, 420), height: plotHeight }
			);
			doc.x = 48;
			doc.y = top0 + 4 + used + 8;
		}
	}

	h('Standards');
	p('Lifecycle per USP <1039> Chemometrics (development, validation, monitoring, update): this version is frozen with its parent, parameters, training membership and exclusions. Challenge set per USP <856>/<1856> (near-infrared spectroscopy). Electronic signature per 21 CFR 11.50/11.70.');
	doc.moveDown(1);
	doc.font('body').fontSize(9).fillColor('#5b6770').text(latin(SCREENING_CAUTION), { width });
	doc.moveDown(0.5).text(latin(`Issued ${at(new Date().toISOString())}.`), { width });
	if (auditHead) doc.moveDown(0.5).text(`Audit trail at issue: event #${auditHead.seq}, head ${auditHead.hash}`, { width });
	doc.end();
	return done;
}
