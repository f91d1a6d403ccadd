/** What a label shows and how a batch is printed: the data the renderer takes. */
export type LabelFormat = 'thermal' | 'a4' | 'letter';
export const LABEL_FORMATS: readonly LabelFormat[] = ['thermal', 'a4', 'letter'];

export interface LabelMark {
	/** A few words, e.g. "N₂ only", "no air", "keep below −70 °C"; subscript digits are drawn small. */
	text: string;
	/** True for a hazard (cryogenic storage, dry ice): drawn with stripes and a pointer to site rules. */
	hazard?: boolean;
}

export interface LabelData {
	/** Item code PREFIX-NNNNN/C with its check character after the slash (ISO/IEC 7064 MOD 37,36). */
	code: string;
	/** Collection, e.g. "TRN · Tarnwick regolith". */
	collection: string;
	/** Recorded mass in whole µg, or null when not weighed yet. */
	massUg: number | null;
	/** Expanded uncertainty U (k = 2) in µg, or null. */
	expandedUg?: number | null;
	/** mg decimals the balance supports; 3 by default. */
	decimals?: number;
	/** Date printed on the label (ISO 8601 calendar date), e.g. the date of the split. */
	date: string | Date;
	/** Who holds the item: the facility or a lab. */
	holder: string;
	mark?: LabelMark | null;
}

export interface RenderOptions {
	format: LabelFormat;
	/** Shift of everything printed, in mm, to correct a printer's drift: + moves right. */
	offsetXmm?: number;
	/** + moves down. */
	offsetYmm?: number;
	/** Sheets only: the first grid position to print on (1 = top left, row by row). */
	startAt?: number;
	/** Public origin for the QR URL; the configured origin by default. */
	origin?: string;
	/** Document title in the PDF metadata. */
	title?: string;
	/**
	 * Reference rendering for the benchmark only: the QR as an embedded PNG instead of vector
	 * modules. Labels printed by Regolog always use vector modules.
	 */
	rasterQr?: boolean;
}
