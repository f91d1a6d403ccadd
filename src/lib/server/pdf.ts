// A one-off A4 document with the shipped font (no font from anywhere else), written into a Buffer.
import PDFDocument from 'pdfkit';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';

const require = createRequire(import.meta.url);

/** The shipped Atkinson Hyperlegible font file of this weight. */
export function fontFile(weight: 400 | 700): string {
	const dir = dirname(require.resolve('@fontsource/atkinson-hyperlegible/package.json'));
	return join(dir, 'files', `atkinson-hyperlegible-latin-${weight}-normal.woff`);
}

/**
 * Draws an A4 document (fonts `body` and `bold` registered) with `draw` and answers its bytes; `draw`
 * ends the document when it is done.
 */
export function a4Pdf(title: string, draw: (doc: PDFKit.PDFDocument) => void): Promise<Buffer> {
	return new Promise((resolve, reject) => {
		const doc = new PDFDocument({ size: 'A4', margin: 50, info: { Title: title, Producer: 'Regolog' } });
		const chunks: Buffer[] = [];
		doc.on('data', (c: Buffer) => chunks.push(c));
		doc.on('end', () => resolve(Buffer.concat(chunks)));
		doc.on('error', reject);
		doc.registerFont('body', fontFile(400));
		doc.registerFont('bold', fontFile(700));
		try {
			draw(doc);
		} catch (e) {
			reject(e);
		}
	});
}
