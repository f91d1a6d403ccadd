import { formatMg } from '../../domain/mass';
import { coolantCaution } from '../../cautions';
import type { getTransfer } from './transfers';
import { a4Pdf } from '../pdf';

type TransferData = Awaited<ReturnType<typeof getTransfer>>;


/** Subscript digits (CO₂) as plain ones: the embedded font has no subscript glyphs. */
const plainDigits = (s: string) => s.replace(/[\u2080-\u2089]/g, (c) => String.fromCharCode(c.charCodeAt(0) - 0x2080 + 0x30));

/** A caution in a box with an ochre bar at its left, as on the screen, across the text width. */
function cautionBox(doc: PDFKit.PDFDocument, title: string[], lines: string[]) {
	const left = doc.page.margins.left;
	const width = doc.page.width - left - doc.page.margins.right;
	const pad = 8;
	const textW = width - 2 * pad - 4;
	doc.moveDown(0.6);
	doc.font('bold').fontSize(10);
	const titleH = doc.heightOfString(title.join(' '), { width: textW });
	doc.font('body').fontSize(9);
	const bodyH = lines.reduce((h, l) => h + doc.heightOfString(l, { width: textW }) + 2, 0);
	const h = titleH + bodyH + 2 * pad + 2;
	if (doc.y + h > doc.page.height - doc.page.margins.bottom) doc.addPage();
	const top = doc.y;
	doc.save().rect(left, top, width, h).fill('#fbf1dc').rect(left, top, 4, h).fill('#b7791f').restore();
	doc.font('bold').fontSize(10).fillColor('#1c1b18').text(title.join(' '), left + 4 + pad, top + pad, { width: textW });
	doc.font('body').fontSize(9);
	for (const l of lines) doc.text(l, left + 4 + pad, doc.y + 2, { width: textW });
	doc.x = left;
	doc.y = top + h;
}

/** The custody receipt of one transfer: manifest, dry-ice mass and the coolant's caution, every signature's manifestation and the manifest hash. */
export function receiptPdf(d: TransferData): Promise<Buffer> {
	return a4Pdf(`Custody receipt ${d.transfer.number}`, (doc) => {
		const x = d.transfer;
		// the facility's side of the transfer carries the `facility.name` setting
		const facility = (x.direction === 'outbound' ? x.from.name : x.to.name) ?? '';
		doc.font('bold').fontSize(18).fillColor('#0f2e2c').text(`Custody receipt ${x.number}`);
		doc.font('body').fontSize(10).fillColor('#3f3c34').text(`Regolog · ${facility} · printed ${new Date().toISOString().replace('T', ' ').slice(0, 19)} UTC`);
		doc.moveDown();
		const row = (k: string, v: string) => {
			doc.font('bold').fontSize(10).fillColor('#1c1b18').text(`${k}: `, { continued: true }).font('body').text(plainDigits(v) || '—');
		};
		row('Direction', x.direction === 'outbound' ? 'Facility to lab' : 'Lab to facility (return)');
		row('From', x.from.name ?? '');
		row('To', x.to.name ?? '');
		row('Request', x.request?.number ?? '—');
		row('State', x.state);
		row('Container and seal', `${x.container}${x.seal ? ` · seal ${x.seal}` : ''}`);
		row('Packaging atmosphere and temperature', [x.atmosphere, x.temperature].filter(Boolean).join(' · '));
		row('Coolant', x.coolantLabel);
		if (x.coolant === 'dry_ice') row('Dry ice, net mass', x.dryIceText ?? 'not recorded (prepared before the mass was recorded)');
		row('Carrier and tracking', [x.carrier, x.trackingRef].filter(Boolean).join(' · '));
		row('Expected arrival', x.expectedArrival ?? '');
		const caution = coolantCaution(x.coolant);
		if (caution) cautionBox(doc, [caution.title], [...caution.lines, caution.defer]);
		doc.moveDown();
		doc.font('bold').fontSize(13).fillColor('#0f2e2c').text('Items');
		doc.font('body').fontSize(10).fillColor('#1c1b18');
		for (const it of d.items) {
			doc.text(`${it.code}    ${formatMg(it.massUg)}${it.expandedUg !== null ? ` ± ${(it.expandedUg / 1000).toFixed(4)} mg (U, k = 2)` : ''}`);
		}
		doc.text(`Total: ${formatMg(d.items.reduce((s, i) => s + i.massUg, 0))} in ${d.items.length} item(s)`);
		doc.moveDown();
		doc.font('bold').fontSize(13).fillColor('#0f2e2c').text('Signatures');
		if (!d.signatures.length) doc.font('body').fontSize(10).fillColor('#1c1b18').text('Not signed yet.');
		for (const s of d.signatures) {
			doc.font('bold').fontSize(10).fillColor('#1c1b18').text(`${s.meaningLabel}`);
			doc.font('body').text(`Signed by ${s.printedName} (${s.roleLabel}, ${s.email}) at ${s.signedAt.replace('T', ' ').slice(0, 19)} UTC`);
			if (s.note) doc.text(`Note: ${s.note}`);
			doc.text(`Manifest SHA-256: ${s.manifestSha256} ${s.verifies ? '(matches the current manifest)' : '(DOES NOT MATCH the current manifest)'}`);
			doc.moveDown(0.5);
		}
		doc.moveDown();
		doc.font('bold').fontSize(10).text('Current manifest SHA-256: ', { continued: true }).font('body').text(d.manifestSha256);
		doc.font('body').fontSize(8).fillColor('#6f6a5c').text(
			'Each signature binds the signer, the meaning, the time and the SHA-256 (FIPS 180-4) of the canonical JSON manifest (RFC 8785). ' +
				'A signature whose hash differs from the current manifest no longer verifies.',
			{ width: 495 }
		);
		doc.end();
	});
}
