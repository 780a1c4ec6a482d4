// Header labels of a spectrum file against where it is uploaded (issue 17 item 2). The header texts are written here
// in the JCAMP-DX labelled-data-record form (McDonald & Wilks 1988: ##LABEL=value, $$ comments) and as CSV comments.
import { describe, expect, it } from 'vitest';
import { headerLabels, headerMismatches } from '../../../src/lib/spectra/labels';

const bytes = (text: string) => new TextEncoder().encode(text);
const jdx = (...header: string[]) => bytes([...header, '##XUNITS=NANOMETERS', '##XYDATA=(X++(Y..Y))', '1100 0.1 0.2 0.3', '##END='].join('\n'));
const target = { lotNumbers: ['QL-2025-00012', 'NV-24-118'], container: 4 };

describe('header labels', () => {
	it('reads the lot and container from a title like the instruments write', () => {
		const l = headerLabels(jdx('##TITLE=LAC-200 Lactose monohydrate 200 mesh, lot NV-24-118, container 04', '##JCAMP-DX=5.01'));
		expect(l.lots).toEqual(['NV-24-118']);
		expect(l.containers).toEqual([4]);
		expect(headerMismatches(l, target)).toEqual([]);
	});

	it('warns when the title names another supplier lot', () => {
		const l = headerLabels(jdx('##TITLE=LAC-200, lot PT-25-009, container 04'));
		expect(headerMismatches(l, target)).toEqual(['the file names lot PT-25-009, not QL-2025-00012 / NV-24-118']);
	});

	it('warns when a comment or a vendor label names another container', () => {
		expect(headerMismatches(headerLabels(jdx('##TITLE=scan', '$$ container C07 re-measured')), target)).toEqual(['the file names container C07, not C04']);
		expect(headerMismatches(headerLabels(jdx('##TITLE=scan', '##$CONTAINER=12')), target)).toEqual(['the file names container C12, not C04']);
		expect(headerMismatches(headerLabels(jdx('##TITLE=scan', '##$LOT=QL-2025-00099')), target)).toEqual(['the file names lot QL-2025-00099, not QL-2025-00012 / NV-24-118']);
	});

	it('accepts our internal lot number, any case, and ignores words that only look like "lot"', () => {
		expect(headerMismatches(headerLabels(jdx('##TITLE=ql-2025-00012 container 4')), target)).toEqual([]);
		expect(headerLabels(jdx('##TITLE=Lotgate tests', '##ORIGIN=pilot plant, lot-to-lot study', '##OWNER=Lactose lab')).lots).toEqual([]);
	});

	it('reads nothing after the data starts, and reads CSV comment lines', () => {
		expect(headerLabels(bytes('##TITLE=x\n##XYDATA=(X++(Y..Y))\n$$ lot ZZ-1 container 9\n')).lots).toEqual([]);
		const csv = headerLabels(bytes('# sample of lot PT-25-009, container 2\nwavelength,absorbance\n1100,0.1\n1102,0.2\n'));
		expect(csv.lots).toEqual(['PT-25-009']);
		expect(csv.containers).toEqual([2]);
		expect(headerMismatches(csv, target)).toHaveLength(2);
	});

	it('names nothing for a file without labels', () => {
		expect(headerMismatches(headerLabels(bytes('1100,0.1\n1102,0.2\n')), target)).toEqual([]);
	});
});
