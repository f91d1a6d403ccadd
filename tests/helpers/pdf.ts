// PDF inspection for the label tests, through poppler-utils (pdftoppm, pdfinfo, pdffonts,
// pdftotext) and the jsQR decoder, all independent of the renderer under test.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PNG } from 'pngjs';
import jsQR, { type QRCode } from 'jsqr';

export interface Raster {
	width: number;
	height: number;
	data: Uint8ClampedArray;
	dpi: number;
}

function withFile<T>(pdf: Buffer, fn: (file: string, dir: string) => T): T {
	const dir = mkdtempSync(join(tmpdir(), 'regolog-pdf-'));
	try {
		const file = join(dir, 'in.pdf');
		writeFileSync(file, pdf);
		return fn(file, dir);
	} finally {
		rmSync(dir, { recursive: true, force: true });
	}
}

/** One page as RGBA pixels. `binary` turns anti-aliasing off, like a thermal head's dots. */
export function rasterise(pdf: Buffer, page = 1, dpi = 300, binary = false): Raster {
	return withFile(pdf, (file, dir) => {
		const args = ['-r', String(dpi), '-f', String(page), '-l', String(page), '-png', '-singlefile'];
		if (binary) args.push('-aa', 'no', '-aaVector', 'no', '-mono');
		execFileSync('pdftoppm', [...args, file, join(dir, 'out')]);
		const png = PNG.sync.read(readFileSync(join(dir, 'out.png')));
		return { width: png.width, height: png.height, data: new Uint8ClampedArray(png.data.buffer, png.data.byteOffset, png.data.length), dpi };
	});
}

/** Decodes a QR code inside a rectangle given in mm from the page's top-left corner. */
export function decodeAt(img: Raster, xMm: number, yMm: number, wMm: number, hMm: number): (QRCode & { originPx: [number, number] }) | null {
	const px = (mm: number) => Math.round((mm / 25.4) * img.dpi);
	const x0 = Math.max(0, px(xMm));
	const y0 = Math.max(0, px(yMm));
	const w = Math.min(img.width - x0, px(wMm));
	const h = Math.min(img.height - y0, px(hMm));
	const out = new Uint8ClampedArray(w * h * 4);
	for (let r = 0; r < h; r++) {
		const from = ((y0 + r) * img.width + x0) * 4;
		out.set(img.data.subarray(from, from + w * 4), r * w * 4);
	}
	const found = jsQR(out, w, h, { inversionAttempts: 'dontInvert' });
	return found ? { ...found, originPx: [x0, y0] } : null;
}

export function decodePage(img: Raster): QRCode | null {
	return jsQR(img.data, img.width, img.height, { inversionAttempts: 'dontInvert' });
}

export function pdfinfo(pdf: Buffer, page = 1): { pages: number; width: number; height: number } {
	const out = withFile(pdf, (file) => execFileSync('pdfinfo', ['-f', String(page), '-l', String(page), file]).toString());
	const pages = Number(/^Pages:\s+(\d+)/m.exec(out)?.[1]);
	const size = new RegExp(`^Page\\s+${page} size:\\s+([\\d.]+) x ([\\d.]+) pts`, 'm').exec(out) ?? /^Page size:\s+([\d.]+) x ([\d.]+) pts/m.exec(out);
	if (!size) throw new Error(`pdfinfo printed no page size:\n${out}`);
	return { pages, width: Number(size[1]), height: Number(size[2]) };
}

export function pdffonts(pdf: Buffer): { name: string; type: string; embedded: boolean; subset: boolean }[] {
	const out = withFile(pdf, (file) => execFileSync('pdffonts', [file]).toString());
	const rows: { name: string; type: string; embedded: boolean; subset: boolean }[] = [];
	for (const line of out.split('\n').slice(2)) {
		// name, type, encoding, emb, sub, uni, object ID
		const m = /^(\S+)\s+(.+?)\s{2,}(\S+)\s+(yes|no)\s+(yes|no)\s+(yes|no)\s+\d+\s+\d+\s*$/.exec(line);
		if (m) rows.push({ name: m[1], type: m[2], embedded: m[4] === 'yes', subset: m[5] === 'yes' });
	}
	return rows;
}

export function pdftext(pdf: Buffer, page?: number): string {
	const range = page ? ['-f', String(page), '-l', String(page)] : [];
	return withFile(pdf, (file) => execFileSync('pdftotext', [...range, '-layout', file, '-']).toString());
}
