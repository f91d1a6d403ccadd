// Demo documents on a piece on offer, so the offer shows what a lab may read before it asks:
// a characterisation sheet (PDF) and a bulk chromatogram (CSV) of HLF fragment F1. Every value is
// invented for the demo (DESIGN.md, demo scenario).
import { QueryTypes, type Sequelize } from 'sequelize';
import { ApiProblem } from '../api';
import { formatMg } from '../../domain/mass';
import { facilityName } from '../facility';
import { storeDocument } from '../documents/store';
import type { Who } from '../registry/common';
import { a4Pdf } from '../pdf';
import { itemPath } from '../../domain/codes';


export const DEMO_SHEET_NAME = 'F1-characterisation-sheet.pdf';
export const DEMO_CHROMATOGRAM_NAME = 'F1-bulk-chromatogram.csv';

function sheetPdf(facility: string, code: string, massUg: number): Promise<Buffer> {
	return a4Pdf(`Characterisation sheet ${code}`, (doc) => {
		doc.font('bold').fontSize(18).fillColor('#0f2e2c').text(`Characterisation sheet ${code}`);
		doc.font('body').fontSize(10).fillColor('#3f3c34').text(`${facility} · demo document, invented values`);
		doc.moveDown();
		const rows: [string, string][] = [
			['Mass at registration', `${formatMg(massUg)} mg`],
			['Appearance', 'Dark grey fragment, fine-grained matrix with sparse pale inclusions up to 0.3 mm'],
			['Visual inspection', 'Under a stereo microscope in the nitrogen glovebox; no fusion crust, no fractures through the piece'],
			['Bulk density (gas pycnometry)', '2.21 ± 0.04 g/cm³'],
			['Magnetic susceptibility', 'log χ = 4.62 (χ in 10⁻⁹ m³/kg)'],
			['Handling so far', 'Glovebox under nitrogen; one photography session on the open bench, within the collection’s limit']
		];
		for (const [k, v] of rows) doc.font('bold').fontSize(10).fillColor('#1c1b18').text(`${k}: `, { continued: true }).font('body').text(v);
		doc.end();
	});
}

function chromatogramCsv(code: string): string {
	// a bulk-extract trace: a baseline with three invented peaks (retention time in minutes, signal in pA)
	const peaks = [
		{ t: 6.8, h: 410, w: 0.07 },
		{ t: 9.35, h: 1280, w: 0.09 },
		{ t: 14.1, h: 260, w: 0.12 }
	];
	const lines = [`# ${code} bulk extract, demo data (invented)`, 'retention_min,signal_pA'];
	for (let i = 0; i <= 400; i++) {
		const t = 4 + i * 0.03;
		const s = 12 + 0.4 * t + peaks.reduce((a, p) => a + p.h * Math.exp(-((t - p.t) ** 2) / (2 * p.w ** 2)), 0);
		lines.push(`${t.toFixed(2)},${s.toFixed(1)}`);
	}
	return lines.join('\n') + '\n';
}

/** Stores the two documents on HLF fragment F1 as the curator, once; skipped when the bucket is not reachable. */
export async function seedOfferDocuments(sq: Sequelize, log: (s: string) => void = () => {}) {
	const [curator] = await sq.query<{ id: string; email: string }>(`SELECT id, email FROM users WHERE email = 'curator@brightwater.example'`, { type: QueryTypes.SELECT });
	const [item] = await sq.query<{ id: string; code: string; mass_ug: string }>(
		`SELECT i.id, i.code, i.mass_ug FROM items i JOIN collections c ON c.id = i.collection_id
		 WHERE c.prefix = 'HLF' AND i.kind = 'specimen' AND i.parent_id IS NULL ORDER BY i.serial OFFSET 1 LIMIT 1`,
		{ type: QueryTypes.SELECT }
	);
	if (!curator || !item) return;
	const who: Who = { id: curator.id, label: curator.email, role: 'curator', labId: null };
	const subject = { type: 'item' as const, id: item.id, labId: null, label: item.code, href: `/items/${itemPath(item.code)}` };
	const facility = await facilityName(sq);
	const docs = [
		{ name: DEMO_SHEET_NAME, kind: 'other' as const, contentType: 'application/pdf', description: 'Characterisation sheet: appearance, density, magnetic susceptibility (demo)', body: () => sheetPdf(facility, item.code, Number(item.mass_ug)) },
		{ name: DEMO_CHROMATOGRAM_NAME, kind: 'chromatogram' as const, contentType: 'text/csv', description: 'Bulk-extract trace, retention time against signal (demo)', body: async () => Buffer.from(chromatogramCsv(item.code)) }
	];
	for (const d of docs) {
		const found = await sq.query('SELECT 1 FROM documents WHERE subject_type = :t AND subject_id = :id AND original_name = :n', { type: QueryTypes.SELECT, replacements: { t: 'item', id: item.id, n: d.name } });
		if (found.length) continue;
		try {
			const bytes = await d.body();
			await storeDocument(sq, who, { subject, kind: d.kind, name: d.name, description: d.description, contentType: d.contentType, declaredLength: bytes.length, body: [bytes] });
		} catch (e) {
			if (e instanceof ApiProblem && e.code === 'storage_unavailable') {
				log('demo documents on offer skipped: the document store is not reachable');
				return;
			}
			throw e;
		}
	}
	log(`demo documents on ${item.code} present`);
}
