// The lot certificate as PDF (pdfkit), set in the Source Sans 3 WOFF files shipped by @fontsource (the package ships
// WOFF and WOFF2 only; pdfkit reads WOFF), never system fonts. Pure function of its content: the same content always gives the same bytes, because
// every date in the file (CreationDate, ModDate, and the /ID pdfkit derives from them) comes from the content.
import { REVIEW_OVERDUE_NOTE } from '../../model-review';
import { containerLabel } from '../../labels';
import canonicalize from 'canonicalize';
import PDFDocument from 'pdfkit';
import { createHash } from 'node:crypto';
import { layoutLabels } from '../../layout/label-layout';
import { printable, reportFonts } from './pdf-fonts';

export interface CertificateStats {
	t2: number | null;
	t2Limit: number | null;
	spe: number | null;
	speLimit: number | null;
	c: number | null;
	cCrit: number | null;
	h: number | null;
	v: number | null;
	accepted: boolean;
}

export interface CertificateContainer {
	container: number;
	scanId: number | null;
	verdict: string;
	profile: string | null;
	ambiguous: boolean;
	reason: string | null;
	fileName: string | null;
	sha256: string | null;
	family: CertificateStats | null;
	/** The genuine class model's statistics (stage 2). */
	genuine: CertificateStats | null;
	/** Every scan of the container by file name and the first 12 hex digits of its SHA-256 (absent on older certificates). */
	scans?: CertificateScan[];
	replicates?: { done: number; required: number };
	/** The model version that screened it was past its review-by date (issue 12 §1). */
	modelReviewOverdue?: boolean;
}

export interface CertificateScan {
	scanId: number;
	fileName: string;
	sha12: string;
	verdict: string;
	profile: string | null;
	counts: boolean;
	invalidated: { cause: string; causeLabel: string; description: string; proposedBy: string; approvedBy: string; at: string; atText: string } | null;
}

export interface CertificateSignature {
	signerName: string;
	signedAt: string;
	/** signedAt printed in the certificate's time zone, e.g. "2025-03-04 14:05:09 UTC". */
	signedAtText: string;
	meaning: string;
	reason: string;
	recordHash: string;
	role: 'first' | 'second';
}

export interface CertificateContent {
	schema: 1;
	number: string;
	timeZone: string;
	/** When the disposition took effect: the document's dates. */
	issuedAt: string;
	issuedAtText: string;
	lot: {
		id: number;
		internalLot: string;
		material: { code: string; name: string; technique: string };
		supplier: { code: string; name: string; status: string };
		supplierLot: string;
		containers: number;
		receivedAt: string;
	};
	plan: { label: string; count: number; containers: number; formula: string; basis: string; justification: string | null; seed: number; sampled: number[] };
	model: { label: string; artefactSha256: string; engineVersion: string | null } | null;
	identity: string;
	identitySummary: string;
	containers: CertificateContainer[];
	/** DD-SIMCA distances of the genuine model on its scaled axes: x = Nh·h/h0, y = Nq·v/v0, accepted when x + y < cCrit. */
	plot: {
		model: string;
		cCrit: number;
		cOutlier: number | null;
		training: [number, number][];
		lot: { container: number; x: number; y: number; verdict: string }[];
	} | null;
	disposition: {
		id: number;
		decision: 'release' | 'quarantine' | 'reject';
		decisionText: string;
		recordHash: string;
		supersedes: { id: number; decision: string; effectiveAtText: string | null } | null;
		twoPersonRule: boolean;
		/** Why two signatures were needed (absent on older certificates: failed identity). */
		twoPersonReason?: string;
	};
	signatures: CertificateSignature[];
	/** The audit trail's last event when the certificate was issued (a checkpoint is written with it). */
	auditHead?: { seq: number; hash: string } | null;
	caution: string;
}

// Every text goes through the embedded font's own character map (pdf-fonts.ts): what it lacks is spelled out.
const latin = printable;

const num = (x: number | null | undefined, digits = 3) => (x == null || !Number.isFinite(x) ? '-' : Math.abs(x) >= 1000 || (Math.abs(x) < 0.01 && x !== 0) ? x.toExponential(2) : x.toFixed(digits));
const pair = (a: number | null | undefined, b: number | null | undefined) => `${num(a, 2)} / ${num(b, 2)}`;

function scanLine(x: CertificateScan): string {
	const state = x.invalidated ? `invalidated (${x.invalidated.cause}), approved by ${x.invalidated.approvedBy}` : x.counts ? 'counts' : 'not counted';
	return `${x.fileName} [${x.sha12}] ${verdictText({ verdict: x.verdict, profile: x.profile, ambiguous: false })}, ${state}`;
}

export function verdictText(c: Pick<CertificateContainer, 'verdict' | 'profile' | 'ambiguous'>) {
	const base = c.verdict === 'not-this-material' ? 'not this material' : c.verdict === 'suspect' ? `suspect: ${c.profile ?? 'profile'}` : c.verdict;
	return c.ambiguous ? `${base} (ambiguous)` : base;
}

const INK = '#1c2a33';
const MUTED = '#5b6770';
const HARBOUR = '#1f3a4d';
const LINE = '#c9d1d6';
const VERDICT_COLOUR: Record<string, string> = {
	genuine: '#2f7d4f',
	suspect: '#b7791f',
	unknown: '#6b4fa3',
	'not-this-material': '#b83232',
	unusable: '#6b7280',
	'not-screened': '#6b7280'
};

type Doc = PDFKit.PDFDocument;

/** A shape per verdict, so the printed table never relies on colour alone. */
function verdictMark(doc: Doc, verdict: string, x: number, y: number, r = 3.2) {
	doc.save().lineWidth(0.9).fillColor(VERDICT_COLOUR[verdict] ?? MUTED).strokeColor(VERDICT_COLOUR[verdict] ?? MUTED);
	if (verdict === 'genuine') doc.circle(x, y, r).fill();
	else if (verdict === 'suspect') doc.polygon([x, y - r], [x + r, y + r * 0.85], [x - r, y + r * 0.85]).fill();
	else if (verdict === 'unknown') doc.polygon([x, y - r], [x + r, y], [x, y + r], [x - r, y]).fill();
	else if (verdict === 'not-this-material') doc.rect(x - r * 0.85, y - r * 0.85, r * 1.7, r * 1.7).fill();
	else doc.moveTo(x - r, y - r).lineTo(x + r, y + r).moveTo(x + r, y - r).lineTo(x - r, y + r).stroke();
	doc.restore();
}

export async function renderCertificate(content: CertificateContent): Promise<Buffer> {
	const issued = new Date(content.issuedAt);
	const doc = new PDFDocument({
		size: 'A4',
		margins: { top: 48, left: 48, right: 48, bottom: 60 },
		bufferPages: true,
		info: {
			Title: `Lot certificate ${content.lot.internalLot}`,
			Author: 'Lotgate',
			Subject: `${content.disposition.decisionText}: ${content.lot.internalLot}`,
			Keywords: content.number,
			CreationDate: issued,
			ModDate: issued
		}
	});
	const font = reportFonts();
	doc.registerFont('body', font.regular);
	doc.registerFont('bold', font.semibold);
	const chunks: Buffer[] = [];
	doc.on('data', (c: Buffer) => chunks.push(c));
	const done = new Promise<Buffer>((resolve, reject) => {
		doc.on('end', () => resolve(Buffer.concat(chunks)));
		doc.on('error', reject);
	});

	const left = doc.page.margins.left;
	const width = doc.page.width - left - doc.page.margins.right;
	const bottom = () => doc.page.height - doc.page.margins.bottom;
	const ensure = (height: number) => {
		if (doc.y + height > bottom()) doc.addPage();
	};
	const heading = (text: string) => {
		ensure(40);
		doc.moveDown(0.7).font('bold').fontSize(12).fillColor(HARBOUR).text(latin(text), left, doc.y, { width });
		doc.moveDown(0.25).font('body').fontSize(9.5).fillColor(INK);
	};
	const facts = (rows: [string, string][]) => {
		for (const [k, v] of rows) {
			const h = Math.max(doc.font('body').fontSize(9.5).heightOfString(latin(v), { width: width - 130 }), 12);
			ensure(h + 2);
			const y = doc.y;
			doc.font('bold').fillColor(MUTED).text(latin(k), left, y, { width: 125 });
			doc.font('body').fillColor(INK).text(latin(v), left + 130, y, { width: width - 130 });
			doc.y = y + h + 2;
		}
	};

	// ---------- title ----------
	doc.font('bold').fontSize(18).fillColor(HARBOUR).text(latin(`Lot certificate ${content.lot.internalLot}`), left, doc.y, { width });
	doc.font('body').fontSize(10).fillColor(MUTED).text(latin(`${content.number} · issued ${content.issuedAtText}`), { width });
	doc.moveDown(0.5);
	const decisionColour = content.disposition.decision === 'release' ? VERDICT_COLOUR.genuine : content.disposition.decision === 'reject' ? VERDICT_COLOUR['not-this-material'] : VERDICT_COLOUR.suspect;
	const boxY = doc.y;
	doc.save().lineWidth(1.2).strokeColor(decisionColour).rect(left, boxY, width, 30).stroke().restore();
	doc.font('bold').fontSize(13).fillColor(decisionColour).text(latin(`Decision: ${content.disposition.decisionText.toUpperCase()}`), left + 10, boxY + 8, { width: width - 20 });
	doc.y = boxY + 38;
	doc.x = left;

	heading('Lot');
	facts([
		['Internal lot', content.lot.internalLot],
		['Material', `${content.lot.material.code} · ${content.lot.material.name} (${content.lot.material.technique})`],
		['Supplier', `${content.lot.supplier.code} · ${content.lot.supplier.name} (status at issue: ${content.lot.supplier.status})`],
		['Supplier lot', content.lot.supplierLot],
		['Containers received', String(content.lot.containers)],
		['Date received', content.lot.receivedAt],
		['Identity', content.identitySummary]
	]);

	heading('Sampling plan and its basis');
	const sampledText = content.plan.sampled.length > 60 ? `${content.plan.sampled.slice(0, 60).join(', ')} … (${content.plan.sampled.length} in all)` : content.plan.sampled.join(', ');
	facts([
		['Plan', `${content.plan.label}: ${content.plan.count} of ${content.plan.containers} containers`],
		['Formula', content.plan.formula],
		['Basis', content.plan.basis],
		...(content.plan.justification ? ([['Justification', content.plan.justification]] as [string, string][]) : []),
		['Random seed', String(content.plan.seed)],
		['Containers sampled', sampledText]
	]);

	heading('Model version');
	facts(
		content.model
			? [
					['Version', content.model.label],
					['Artefact SHA-256', content.model.artefactSha256],
					...(content.model.engineVersion ? ([['Engine', content.model.engineVersion]] as [string, string][]) : [])
				]
			: [['Version', 'none: the lot was not screened with an approved model']]
	);

	// ---------- per container ----------
	heading('Verdict per container');
	const cols = [
		{ label: 'Container', w: 52 },
		{ label: 'Verdict', w: 128 },
		{ label: 'Family T² / limit', w: 78 },
		{ label: 'Family SPE / limit', w: 82 },
		{ label: 'Family c / c crit', w: 78 },
		{ label: 'Genuine c / c crit', w: width - 52 - 128 - 78 - 82 - 78 }
	];
	const header = () => {
		const y = doc.y;
		doc.font('bold').fontSize(8.5).fillColor(MUTED);
		let x = left;
		for (const c of cols) {
			doc.text(latin(c.label), x + 2, y, { width: c.w - 4, lineBreak: false });
			x += c.w;
		}
		doc.save().strokeColor(LINE).lineWidth(0.6).moveTo(left, y + 12).lineTo(left + width, y + 12).stroke().restore();
		doc.y = y + 15;
	};
	ensure(40);
	header();
	for (const c of content.containers) {
		const cells = [
			containerLabel(c.container),
			verdictText(c),
			pair(c.family?.t2, c.family?.t2Limit),
			pair(c.family?.spe, c.family?.speLimit),
			pair(c.family?.c, c.family?.cCrit),
			pair(c.genuine?.c, c.genuine?.cCrit)
		];
		doc.font('body').fontSize(8.5);
		const reasonParts = [c.modelReviewOverdue ? `${REVIEW_OVERDUE_NOTE}: the model version was past its review-by date when it screened this container` : null, c.verdict !== 'genuine' && c.reason ? c.reason : null].filter((x): x is string => !!x);
		const reason = reasonParts.length ? latin(reasonParts.join('. ')) : null;
		const reasonHeight = reason ? doc.fontSize(7.5).heightOfString(reason, { width: width - 60 }) + 2 : 0;
		const scanText = c.scans?.length ? latin(`${c.replicates && c.replicates.required > 1 ? `Replicates ${c.replicates.done} of ${c.replicates.required}. ` : ''}Scans: ${c.scans.map(scanLine).join('; ')}`) : null;
		const scanHeight = scanText ? doc.fontSize(7.5).heightOfString(scanText, { width: width - 60 }) + 2 : 0;
		const rowHeight = 13 + reasonHeight + scanHeight;
		if (doc.y + rowHeight > bottom()) {
			doc.addPage();
			header();
		}
		const y = doc.y;
		let x = left;
		cells.forEach((cell, i) => {
			doc.font(i === 1 ? 'bold' : 'body').fontSize(8.5).fillColor(INK);
			if (i === 1) {
				verdictMark(doc, c.verdict, x + 5, y + 5);
				doc.text(latin(cell), x + 12, y, { width: cols[i].w - 14, lineBreak: false, ellipsis: true });
			} else doc.text(latin(cell), x + 2, y, { width: cols[i].w - 4, lineBreak: false });
			x += cols[i].w;
		});
		if (reason) doc.font('body').fontSize(7.5).fillColor(MUTED).text(reason, left + 56, y + 12, { width: width - 60 });
		if (scanText) doc.font('body').fontSize(7.5).fillColor(INK).text(scanText, left + 56, y + 12 + reasonHeight, { width: width - 60 });
		doc.y = y + rowHeight;
		doc.save().strokeColor('#e5e9ec').lineWidth(0.4).moveTo(left, doc.y - 1).lineTo(left + width, doc.y - 1).stroke().restore();
	}
	doc.x = left;
	doc.font('body').fontSize(7.5).fillColor(MUTED).text(
		latin('Marks: filled circle genuine · triangle suspect · diamond unknown · square not this material · cross unusable. A value above its limit is outside the model.'),
		left,
		doc.y + 3,
		{ width }
	);

	// ---------- invalidated scans ----------
	const invalidated = content.containers.flatMap((c) => (c.scans ?? []).filter((x) => x.invalidated).map((x) => ({ container: c.container, scan: x })));
	if (invalidated.length) {
		heading('Invalidated scans');
		for (const { container, scan } of invalidated) {
			const v = scan.invalidated!;
			ensure(30);
			doc.font('body').fontSize(8.5).fillColor(INK).text(
				latin(
					`Container ${containerLabel(container)}, scan #${scan.scanId} ${scan.fileName} (SHA-256 ${scan.sha12}…), ${verdictText({ verdict: scan.verdict, profile: scan.profile, ambiguous: false })}: ` +
						`invalidated by ${v.proposedBy} because ${v.causeLabel}: "${v.description}"; approved by ${v.approvedBy}, ${v.atText}.`
				),
				left,
				doc.y + 2,
				{ width }
			);
		}
		doc.font('body').fontSize(7.5).fillColor(MUTED).text(latin('An invalidated scan keeps its verdict on record but no longer counts toward its container.'), left, doc.y + 3, { width });
	}

	// ---------- distance plot ----------
	if (content.plot) drawPlot(doc, content.plot, left, width, ensure, heading);

	// ---------- signatures ----------
	heading('Electronic signatures');
	if (content.disposition.twoPersonRule)
		facts([['Two-person rule', `${content.disposition.twoPersonReason ?? 'The lot failed identity'}: its release carries the signatures of two different QA managers.`]]);
	if (content.disposition.supersedes) {
		const s = content.disposition.supersedes;
		facts([['Supersedes', `disposition #${s.id} (${s.decision}${s.effectiveAtText ? `, ${s.effectiveAtText}` : ''}), which stays on record`]]);
	}
	facts([['Signed record hash', `SHA-256 ${content.disposition.recordHash}`]]);
	if (content.auditHead) facts([['Audit trail at issue', `event #${content.auditHead.seq}, head ${content.auditHead.hash}`]]);
	for (const s of content.signatures) {
		ensure(70);
		doc.moveDown(0.3);
		const y = doc.y;
		doc.save().strokeColor(LINE).lineWidth(0.6).moveTo(left, y).lineTo(left + width, y).stroke().restore();
		doc.y = y + 5;
		facts([
			[s.role === 'first' ? 'Signed by' : 'Second signature', s.signerName],
			['Date and time', s.signedAtText],
			['Meaning', s.meaning],
			['Reason', s.reason],
			['Record hash', s.recordHash]
		]);
	}

	heading('Caution');
	ensure(30);
	doc.font('bold').fontSize(9.5).fillColor(INK).text(latin(content.caution), left, doc.y, { width });

	// ---------- page numbers and document hash on every page ----------
	const range = doc.bufferedPageRange();
	const documentHash = certificateDocumentHash(content);
	for (let i = range.start; i < range.start + range.count; i++) {
		doc.switchToPage(i);
		// Writing inside the bottom margin would start a new page; lift the margin while the footer is drawn.
		const saved = doc.page.margins.bottom;
		doc.page.margins.bottom = 0;
		const y = doc.page.height - 44;
		doc.save().strokeColor(LINE).lineWidth(0.5).moveTo(left, y - 4).lineTo(left + width, y - 4).stroke().restore();
		doc.font('body').fontSize(7.5).fillColor(MUTED);
		doc.text(latin(`${content.lot.internalLot} · ${content.number}`), left, y, { width: width / 2, lineBreak: false });
		doc.text(`page ${i - range.start + 1} of ${range.count}`, left + width / 2, y, { width: width / 2, align: 'right', lineBreak: false });
		doc.text(`Document hash (SHA-256 of the certified content): ${documentHash}`, left, y + 11, { width, lineBreak: false });
		doc.page.margins.bottom = saved;
	}
	doc.end();
	return done;
}

function drawPlot(
	doc: Doc,
	plot: NonNullable<CertificateContent['plot']>,
	left: number,
	width: number,
	ensure: (h: number) => void,
	heading: (t: string) => void
) {
	const height = 190;
	const limit = plot.cOutlier ?? plot.cCrit;
	// Axes reach just past the outlier boundary; a container beyond them is not drawn but listed under the plot.
	const cap = limit * 1.6;
	const offScale = plot.lot.filter((p) => p.x > cap || p.y > cap);
	const onScale = plot.lot.filter((p) => !(p.x > cap || p.y > cap));
	const noteText = offScale.length
		? latin(
				`Off scale, not drawn (beyond ${num(cap, 1)} on an axis): ` +
					offScale.map((p) => `container ${containerLabel(p.container)} (${verdictText({ verdict: p.verdict, profile: null, ambiguous: false })}; Nh·h/h0 = ${num(p.x, 1)}, Nq·v/v0 = ${num(p.y, 1)})`).join('; ') +
					'.'
			)
		: '';
	ensure(height + 70 + (noteText ? 30 : 0));
	heading(`Distance plot (${plot.model} model, DD-SIMCA)`);
	const box = { x: left + 42, y: doc.y + 4, w: Math.min(width - 60, 360), h: height };
	const shown = [...plot.training.filter(([x, y]) => x <= cap && y <= cap), ...onScale.map((p) => [p.x, p.y] as [number, number])];
	const maxX = Math.max(limit * 1.15, ...shown.map((p) => p[0]));
	const maxY = Math.max(limit * 1.15, ...shown.map((p) => p[1]));
	const sx = (x: number) => box.x + (Math.min(Math.max(x, 0), maxX) / maxX) * box.w;
	const sy = (y: number) => box.y + box.h - (Math.min(Math.max(y, 0), maxY) / maxY) * box.h;

	doc.save();
	doc.rect(box.x, box.y, box.w, box.h).lineWidth(0.6).strokeColor(LINE).stroke();
	// Acceptance area x + y < c_crit, and the outlier boundary x + y = c_outlier.
	doc.polygon([sx(0), sy(0)], [sx(plot.cCrit), sy(0)], [sx(0), sy(plot.cCrit)]).fillOpacity(0.12).fill(VERDICT_COLOUR.genuine);
	doc.fillOpacity(1);
	doc.moveTo(sx(plot.cCrit), sy(0)).lineTo(sx(0), sy(plot.cCrit)).lineWidth(1).strokeColor(VERDICT_COLOUR.genuine).stroke();
	if (plot.cOutlier) doc.moveTo(sx(plot.cOutlier), sy(0)).lineTo(sx(0), sy(plot.cOutlier)).lineWidth(0.8).dash(3, { space: 2 }).strokeColor(VERDICT_COLOUR['not-this-material']).stroke().undash();
	const training = plot.training.filter(([x, y]) => x <= maxX && y <= maxY).map(([x, y]) => ({ x: sx(x), y: sy(y) }));
	for (const t of training) doc.circle(t.x, t.y, 1.3).fillColor('#9aa5ad').fill();
	doc.restore();

	// Container labels: laid out without overlap (label-layout.ts); a label moved away from its point gets a leader line.
	const labelSize = 6.5;
	doc.font('body').fontSize(labelSize);
	// The label box is the line box pdfkit sets the label (C01, as in the table) in (ascender to descender), so boxes apart means glyphs apart.
	const lineHeight = doc.currentLineHeight();
	const requests = onScale.map((p, i) => ({ id: String(i), x: sx(p.x), y: sy(p.y), width: doc.widthOfString(containerLabel(p.container)), height: lineHeight }));
	const layout = layoutLabels(requests, { left: box.x + 1, top: box.y + 1, right: box.x + box.w - 1, bottom: box.y + box.h - 1 }, { markerRadius: 3.6, gap: 1, avoid: training });
	doc.save().lineWidth(0.4).strokeColor(MUTED);
	for (const l of layout.placed) if (l.leader) doc.moveTo(l.leader.x1, l.leader.y1).lineTo(l.leader.x2, l.leader.y2).stroke();
	doc.restore();
	for (const p of onScale) verdictMark(doc, p.verdict, sx(p.x), sy(p.y), 3.4);
	for (const l of layout.placed) doc.font('body').fontSize(labelSize).fillColor(INK).text(containerLabel(onScale[Number(l.id)].container), l.x, l.y, { lineBreak: false });
	const unlabelled = layout.unplaced.map((id) => containerLabel(onScale[Number(id)].container));

	// Axis ticks at 0, c_crit and the axis end.
	doc.font('body').fontSize(7).fillColor(MUTED);
	for (const t of [0, plot.cCrit, maxX]) doc.text(num(t, 1), sx(t) - 12, box.y + box.h + 3, { width: 24, align: 'center', lineBreak: false });
	for (const t of [0, plot.cCrit, maxY]) doc.text(num(t, 1), box.x - 30, sy(t) - 4, { width: 26, align: 'right', lineBreak: false });
	doc.text('score distance  Nh·h/h0', box.x, box.y + box.h + 13, { width: box.w, align: 'center', lineBreak: false });
	doc.save().rotate(-90, { origin: [box.x - 34, box.y + box.h / 2] });
	doc.text('orthogonal distance  Nq·v/v0', box.x - 34 - box.h / 2, box.y + box.h / 2 - 4, { width: box.h, align: 'center', lineBreak: false });
	doc.restore();
	const legendX = box.x + box.w + 10;
	doc.font('body').fontSize(7).fillColor(MUTED);
	doc.text('grey dots: training', legendX, box.y + 4, { width: width - (legendX - left), lineBreak: false });
	doc.text('green line: c = c crit', legendX, box.y + 14, { width: width - (legendX - left), lineBreak: false });
	doc.text('red dashes: outlier limit', legendX, box.y + 24, { width: width - (legendX - left), lineBreak: false });
	doc.text('C01, C02 …: containers', legendX, box.y + 34, { width: width - (legendX - left), lineBreak: false });
	doc.text('thin lines: label moved', legendX, box.y + 44, { width: width - (legendX - left), lineBreak: false });
	doc.x = left;
	doc.y = box.y + box.h + 28;
	if (unlabelled.length)
		doc.font('body').fontSize(7.5).fillColor(MUTED).text(latin(`No room for the labels of containers ${unlabelled.join(', ')}; their marks are drawn, their figures are in the table above.`), left, doc.y, { width });
	if (noteText) doc.font('body').fontSize(7.5).fillColor(INK).text(noteText, left, doc.y + 2, { width });
	doc.x = left;
}

/** The hash printed on every page: sha256 of the canonical JSON of the content (the PDF cannot contain its own hash). */
export function certificateDocumentHash(content: CertificateContent): string {
	return createHash('sha256')
		.update(canonicalize(JSON.parse(JSON.stringify(content))) ?? '')
		.digest('hex');
}
