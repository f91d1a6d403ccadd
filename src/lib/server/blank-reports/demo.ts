import { QueryTypes, type Sequelize } from 'sequelize';
import { appendTrail, SYSTEM_ACTOR } from '../trail';
import { registerSpecimen } from '../registry/items';
import { SYSTEM_WHO, type Who } from '../registry/common';
import { ApiProblem } from '../api';
import { COLUMNS } from '../../domain/blank-report';
import { createReport } from './service';

export const DEMO_REPORT_TITLE = 'Hot-water extract of a cell 1 aliquot, chiral GC-MS run 1';
const DEMO_WITNESS_DESCRIPTION = 'Witness coupon: baked aluminium foil left open beside the cell 1 aliquot in the nitrogen glovebox during sub-sampling';
const DEMO_BLANK_DESCRIPTION = 'Procedural blank: baked fused-silica vial carried through hot-water extraction and acid hydrolysis alongside the cell 1 aliquot';

type DemoRows = [analyte: string, enantiomer: 'L' | 'D' | '', values: number[], u?: number][];

/**
 * The demo table of Fennick Organics Lab (invented values, nmol/g), chosen so that every rule of
 * the report shows once: a protein amino acid with an L-excess and a noticeable blank share
 * (alanine, with stated uncertainties combined with the replicate scatter); a non-protein one whose
 * small excess is not significant once the degrees of freedom are counted (isovaline); one close to
 * its blanks, not quantifiable (aspartic acid); one whose L is detected without its D (serine); a
 * semi-quantitative ee with its Monte-Carlo interval (norvaline); one on weak limits from two
 * blanks whose excess does not survive the Holm adjustment (valine); a small but significant
 * excess measured precisely (α-aminobutyric acid); and glycine, achiral, with one blank.
 */
const SAMPLE: DemoRows = [
	['alanine', 'L', [14.8, 15.3, 15.0], 0.3],
	['alanine', 'D', [9.1, 9.4, 9.0], 0.2],
	['isovaline', 'L', [4.6, 4.9, 4.4]],
	['isovaline', 'D', [4.1, 4.3, 4.0]],
	['aspartic acid', 'L', [0.9, 1.1, 0.8]],
	['aspartic acid', 'D', [0.5, 0.6, 0.4]],
	['serine', 'L', [1.9, 2.0, 2.1]],
	['serine', 'D', [0.16, 0.18, 0.15]],
	['norvaline', 'L', [0.62, 0.66, 0.64]],
	['norvaline', 'D', [0.19, 0.21, 0.2]],
	['valine', 'L', [3.1, 3.3, 3.2]],
	['valine', 'D', [2.6, 2.8, 2.7]],
	['α-aminobutyric acid', 'L', [2.62, 2.6, 2.66], 0.03],
	['α-aminobutyric acid', 'D', [2.44, 2.47, 2.42], 0.03],
	['glycine', '', [22.1, 23.0]]
];
const BLANK: DemoRows = [
	['alanine', 'L', [2.1, 2.6, 1.9, 2.4]],
	['alanine', 'D', [0.4, 0.6, 0.5, 0.5]],
	['isovaline', 'L', [0.02, 0.03, 0.02, 0.03]],
	['isovaline', 'D', [0.02, 0.02, 0.03, 0.02]],
	['aspartic acid', 'L', [0.6, 0.9, 0.7, 0.5]],
	['aspartic acid', 'D', [0.3, 0.4, 0.35, 0.3]],
	['serine', 'L', [0.3, 0.35, 0.32, 0.28]],
	['serine', 'D', [0.12, 0.15, 0.13, 0.16]],
	['norvaline', 'L', [0.05, 0.06, 0.05, 0.06]],
	['norvaline', 'D', [0.04, 0.07, 0.05, 0.08]],
	['valine', 'L', [0.3, 0.36]],
	['valine', 'D', [0.1, 0.12]],
	['α-aminobutyric acid', 'L', [0.02, 0.03, 0.02, 0.03]],
	['α-aminobutyric acid', 'D', [0.02, 0.03, 0.02, 0.03]],
	['glycine', '', [3.1]]
];
/** A witness coupon exposed beside the aliquot: shown on its own, not pooled with the procedural blank. */
const WITNESS: DemoRows = [
	['alanine', 'L', [0.3, 0.4, 0.35]],
	['alanine', 'D', [0.1, 0.12, 0.11]]
];

export function demoCsv(sampleCode: string, blankCode: string, witnessCode?: string): string {
	const lines = [COLUMNS.join(',')];
	const add = (code: string, rows: DemoRows) => {
		for (const [analyte, e, values, u] of rows) values.forEach((v, i) => lines.push([analyte, e, code, i + 1, v, 'nmol/g', u ?? ''].join(',')));
	};
	add(sampleCode, SAMPLE);
	add(blankCode, BLANK);
	if (witnessCode) add(witnessCode, WITNESS);
	return lines.join('\r\n') + '\r\n';
}

/**
 * One blank-control report of Fennick Organics Lab on the first TRN aliquot it holds, with a
 * procedural blank and a witness coupon of its own. Idempotent: nothing happens when the report exists. A storage
 * outage skips the report (and says so) instead of failing the whole seed.
 */
export async function seedBlankControlDemo(sq: Sequelize, log: (s: string) => void = () => {}) {
	const [lab] = await sq.query<{ id: string }>(`SELECT id FROM labs WHERE name = 'Fennick Organics Lab'`, { type: QueryTypes.SELECT });
	const [user] = await sq.query<{ id: string; email: string }>(`SELECT id, email FROM users WHERE email = 'analyst@fennick.example'`, { type: QueryTypes.SELECT });
	if (!lab || !user) return;
	const exists = await sq.query('SELECT 1 FROM blank_control_reports WHERE title = :title AND lab_id = :lab', { type: QueryTypes.SELECT, replacements: { title: DEMO_REPORT_TITLE, lab: lab.id } });
	if (exists.length) return;
	const [sample] = await sq.query<{ code: string }>(
		`SELECT i.code FROM items i JOIN collections c ON c.id = i.collection_id
		 WHERE c.prefix = 'TRN' AND i.kind = 'aliquot' AND i.holder_lab_id = :lab ORDER BY i.serial LIMIT 1`,
		{ type: QueryTypes.SELECT, replacements: { lab: lab.id } }
	);
	if (!sample) return;
	const blank = await demoBlank(sq, lab.id, DEMO_BLANK_DESCRIPTION, 'Fused-silica vial, baked 500 °C', 'demo procedural blank');
	const witness = await demoBlank(sq, lab.id, DEMO_WITNESS_DESCRIPTION, 'Aluminium foil coupon in a baked glass dish', 'demo witness coupon');
	const who: Who = { id: user.id, label: user.email, role: 'lab_member', labId: lab.id };
	try {
		await createReport(sq, who, { title: DEMO_REPORT_TITLE, fileName: 'fennick-cell-1-run1.csv', contentType: 'text/csv', bytes: Buffer.from(demoCsv(sample.code, blank.code, witness.code)) });
		log(`demo blank-control report on ${sample.code} present`);
	} catch (e) {
		if (e instanceof ApiProblem && e.code === 'storage_unavailable') log('demo blank-control report skipped: the document store is not reachable');
		else throw e;
	}
}

/** The demo's blank item with this description, registered and lent to the lab when it is not there yet. */
async function demoBlank(sq: Sequelize, labId: string, description: string, container: string, note: string): Promise<{ code: string }> {
	const [found] = await sq.query<{ code: string }>(
		`SELECT i.code FROM items i JOIN collections c ON c.id = i.collection_id WHERE c.prefix = 'TRN' AND i.kind = 'blank' AND i.description = :d LIMIT 1`,
		{ type: QueryTypes.SELECT, replacements: { d: description } }
	);
	if (found) return found;
	const [curator] = await sq.query<{ id: string; email: string }>(`SELECT id, email FROM users WHERE email = 'curator@brightwater.example'`, { type: QueryTypes.SELECT });
	const staff: Who = curator ? { id: curator.id, label: curator.email, role: 'curator', labId: null } : SYSTEM_WHO;
	const item = await registerSpecimen(sq, staff, { collection: 'TRN', kind: 'blank', massUg: 1, description, container, storagePlace: 'Fennick Organics Lab' });
	await sq.transaction(async (t) => {
		const [row] = await sq.query<{ id: string }>(`UPDATE items SET state = 'on_loan', holder_lab_id = :lab, updated_at = now() WHERE code = :code RETURNING id`, {
			type: QueryTypes.SELECT, replacements: { code: item.code, lab: labId }, transaction: t
		});
		await appendTrail(sq, t, {
			actor: SYSTEM_ACTOR, action: 'item.placed_on_loan', subjectType: 'item', subjectId: row.id,
			before: { state: 'stored', holder: null }, after: { code: item.code, state: 'on_loan', holderLabId: labId, note }
		});
	});
	return { code: item.code };
}
