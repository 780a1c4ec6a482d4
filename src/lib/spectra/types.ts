// Shapes shared by the spectrum parsers; the server stores these, the upload preview plots them.

export type AxisUnit = 'nm' | 'cm-1' | 'um';

export type Technique = 'NIR' | 'Raman' | 'mid-IR';

export type SpectrumFormat = 'jcamp' | 'csv-xy' | 'csv-matrix';

export interface ParsedSpectrum {
	/** Row id for a CSV matrix (value of its first non-numeric column); null for JCAMP-DX and x,y files. */
	id: string | null;
	/** In the file's order: ascending or descending, always strictly monotonic. */
	axis: Float64Array;
	values: Float64Array;
	unit: AxisUnit;
	yUnit: string | null;
	title: string | null;
	/** JCAMP-DX: the ##$ vendor labels (without "$"); CSV matrix: the non-numeric columns of the row. */
	meta: Record<string, string>;
	/** ISO 8601 ("2025-03-04T09:15:00", offset appended when the file gives one), or null. */
	acquiredAt: string | null;
	technique: Technique | null;
	/** Indices of non-finite values; only ever non-empty when `allowGaps` was set. */
	missing: number[];
	/** 1-based line where the spectrum starts (CSV row, or the JCAMP-DX ##XYDATA= label). */
	line?: number;
}

export interface ParsedFile {
	format: SpectrumFormat;
	fileName: string;
	spectra: ParsedSpectrum[];
	/** CSV matrix only: the non-numeric column names, in file order. */
	metaColumns?: string[];
	/** JCAMP-DX only: the ##JCAMP-DX= version as written. */
	jcampVersion?: string;
	/** JCAMP-DX only: the data encodings found in ##XYDATA (AFFN, PAC, SQZ, DIF, DUP). */
	encodings?: string[];
}

export interface ParseOptions {
	/** Keep non-finite values (listed in `missing`) instead of refusing the file; default false. */
	allowGaps?: boolean;
	/** Fewest points a spectrum may have; default 50. */
	minPoints?: number;
	/** CSV only: the axis unit to assume when no header names one (see csv.ts for the rule). */
	unit?: AxisUnit;
	/** CSV only: 'matrix' reads one spectrum per row even with two columns (the command line's training and input
	 * files); 'auto' (default) reads two columns as x,y. */
	layout?: 'auto' | 'matrix';
}
