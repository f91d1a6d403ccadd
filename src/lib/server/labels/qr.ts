/**
 * The QR code on a label: the URL it holds and its drawing, as vector rectangles from the module
 * matrix of `qrcode.create` (or, for the benchmark's reference only, as an embedded PNG). Error
 * correction level Q (ISO/IEC 18004); see render.ts for why.
 */
import QRCode from 'qrcode';
import { itemPath } from '../../domain/codes';
import { config } from '../config';

type Doc = PDFKit.PDFDocument;
const INK = '#000000';

/** The URL a label's QR code holds. */
export function itemUrl(code: string, origin = config.origin): string {
	return `${origin.replace(/\/+$/, '')}/items/${itemPath(code)}`;
}

const QR_LEVEL = 'Q' as const;

/** Dark modules as rectangles, one per horizontal run, filled as one path. Returns the module size. */
export function drawQrVector(doc: Doc, payload: string, x: number, y: number, size: number): number {
	const qr = QRCode.create(payload, { errorCorrectionLevel: QR_LEVEL });
	const n = qr.modules.size;
	const data = qr.modules.data;
	const m = size / n;
	for (let r = 0; r < n; r++) {
		let c = 0;
		while (c < n) {
			if (!data[r * n + c]) {
				c++;
				continue;
			}
			const start = c;
			while (c < n && data[r * n + c]) c++;
			doc.rect(x + start * m, y + r * m, (c - start) * m, m);
		}
	}
	doc.fill(INK);
	return m;
}

export async function drawQrRaster(doc: Doc, payload: string, x: number, y: number, size: number): Promise<number> {
	const png = await QRCode.toBuffer(payload, { errorCorrectionLevel: QR_LEVEL, margin: 0, scale: 8 });
	const n = QRCode.create(payload, { errorCorrectionLevel: QR_LEVEL }).modules.size;
	doc.image(png, x, y, { width: size, height: size });
	return size / n;
}
