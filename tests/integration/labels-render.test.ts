import { describe, it, expect, beforeAll } from 'vitest';
import { inflateSync } from 'node:zlib';
import { formatCode, itemPath, legacyCode } from '../../src/lib/domain/codes';
import {
	renderLabels,
	renderLabelsToBuffer,
	massLine,
	itemUrl,
	type LabelData,
	type RenderOptions
} from '../../src/lib/server/labels/render';
import { rasterise, decodeAt, decodePage, pdfinfo, pdffonts, pdftext } from '../helpers/pdf';

const ORIGIN = 'https://regolog.brightwater.example';

const label = (i: number, over: Partial<LabelData> = {}): LabelData => ({
	code: formatCode(['TRN', 'HLF', 'ICE'][i % 3], 100 + i),
	collection: ['TRN · Tarnwick regolith', 'HLF · Hollins Ford fall', 'ICE · Ice analogue runs'][i % 3],
	massUg: 2184 + i,
	expandedUg: 1.633,
	date: '2031-04-12',
	holder: i % 2 ? 'Fennick Organics Lab' : 'Brightwater Curation Facility',
	mark: i % 3 === 0 ? { text: 'N₂ only' } : null,
	...over
});

const render = (labels: LabelData[], opts: Partial<RenderOptions> & Pick<RenderOptions, 'format'>) =>
	renderLabelsToBuffer(labels, { origin: ORIGIN, ...opts });

/** A4 and US Letter grids as specified for Regolog's sheets (mm from the paper's top-left corner). */
const GRID = {
	a4: { cols: 3, rows: 10, left: 21.6, top: 14.3, pitchX: 58, pitchY: 27 },
	letter: { cols: 3, rows: 9, left: 24.55, top: 13, pitchX: 58, pitchY: 28.5 }
} as const;
const LABEL = { w: 50.8, h: 25.4 };

describe('thermal label', () => {
	let pdf: Buffer;
	const one = label(0, { code: formatCode('TRN', 42) });
	beforeAll(async () => {
		pdf = await render([one], { format: 'thermal' });
	});

	it('holds the item URL in a QR code that an independent ISO/IEC 18004 reader (jsQR) decodes', () => {
		const img = rasterise(pdf, 1, 600);
		const qr = decodePage(img);
		// the code's slash is percent-encoded, so the URL's path keeps one segment per code
		expect(qr?.data).toBe(`${ORIGIN}/items/TRN-00042%2FG`);
		expect(qr?.data).toBe(`${ORIGIN}/items/${itemPath(one.code)}`);
		expect(qr?.data).toBe(itemUrl(one.code, ORIGIN));
	});

	it('still decodes when printed as binary dots at 203 dpi, like a thermal head', () => {
		const img = rasterise(pdf, 1, 203, true);
		expect(decodePage(img)?.data).toBe(`${ORIGIN}/items/TRN-00042%2FG`);
	});

	it('is 50.8 × 25.4 mm = 144 × 72 pt (ISO 32000-1 §8.3.2.3: 1 pt = 1/72 in; 50.8 mm = 2 in)', () => {
		const info = pdfinfo(pdf);
		expect(info.pages).toBe(1);
		expect(info.width).toBeCloseTo(144, 2);
		expect(info.height).toBeCloseTo(72, 2);
		expect(pdf.toString('latin1')).toMatch(/\/MediaBox \[0 0 144(\.0+)? 72(\.0+)?\]/);
	});

	it('embeds Atkinson Hyperlegible (regular and bold) as a TrueType font program', () => {
		const fonts = pdffonts(pdf);
		const names = fonts.map((f) => f.name.replace(/^[A-Z]{6}\+/, ''));
		expect(names).toEqual(expect.arrayContaining(['AtkinsonHyperlegible-Regular', 'AtkinsonHyperlegible-Bold']));
		for (const f of fonts) expect(f.embedded, f.name).toBe(true);
		// ISO 32000-1 §9.9: an embedded TrueType program is a FontFile2 stream.
		expect(pdf.toString('latin1')).toContain('/FontFile2');
	});

	it('prints the code with its check character, collection, mass ± U, date, holder and mark as text', () => {
		const text = pdftext(pdf).replace(/\s+/g, ' ');
		expect(text).toContain('TRN-00042/G');
		// what the slash sets apart is said on the label itself
		expect(text).toContain('/G is check');
		expect(text).toContain('TRN · Tarnwick regolith');
		expect(text).toContain('2.184 ± 0.002 mg');
		expect(text).toContain('2031-04-12');
		expect(text).toContain('Brightwater Curation Facility');
		expect(text).toMatch(/N\s?2 only/);
	});

	it('draws the QR as vector rectangles, not an image', async () => {
		const raw = pdf.toString('latin1');
		expect(raw).not.toContain('/Subtype /Image');
		const content = pageContent(pdf);
		expect((content.match(/ re\b/g) ?? []).length).toBeGreaterThan(100);
		const raster = await render([one], { format: 'thermal', rasterQr: true });
		expect(raster.toString('latin1')).toContain('/Subtype /Image');
	});

	it('moves everything by the printer offset', async () => {
		const shifted = await render([one], { format: 'thermal', offsetXmm: 2, offsetYmm: -1 });
		const a = decodePage(rasterise(pdf, 1, 600))!;
		const b = decodePage(rasterise(shifted, 1, 600))!;
		const mm = 600 / 25.4;
		expect(b.location.topLeftCorner.x - a.location.topLeftCorner.x).toBeCloseTo(2 * mm, -0.5);
		expect(b.location.topLeftCorner.y - a.location.topLeftCorner.y).toBeCloseTo(-1 * mm, -0.5);
		expect(b.data).toBe(a.data);
	});

	it('decodes for a long public origin, which needs a larger QR version', async () => {
		const origin = 'https://regolog-curation.facility-registry.brightwater.example:8443/branch/north';
		const long = await renderLabelsToBuffer([one], { format: 'thermal', origin });
		expect(decodePage(rasterise(long, 1, 600))?.data).toBe(`${origin}/items/TRN-00042%2FG`);
	});
});

function pageContent(pdf: Buffer, n = 0): string {
	// Page content streams are Flate-compressed (ISO 32000-1 §7.4.4); find the n-th one after a page's /Contents.
	const raw = pdf.toString('latin1');
	const refs = [...raw.matchAll(/\/Contents (\d+) 0 R/g)].map((m) => m[1]);
	const id = refs[n];
	const at = raw.indexOf(`\n${id} 0 obj`);
	const start = raw.indexOf('stream\n', at) + 'stream\n'.length;
	const end = raw.indexOf('\nendstream', start);
	return inflateSync(pdf.subarray(start, end)).toString('latin1');
}

describe('mass line', () => {
	it('shows U (k = 2) rounded up to the balance decimals, never understated (JCGM 100:2008, 7.2.6)', () => {
		// This project's design value (DESIGN §3.1), not one printed in the GUM: computed with JCGM 100:2008
		// 5.1.2 (independent inputs) and F.2.2.1 (resolution d contributes d/√12) from d = 1 µg, s = 0.5 µg:
		// u_net = √(2·(s² + d²/12)) = √(2·(0.25 + 0.0833)) = 0.8165 µg, U = k·u = 2 × 0.8165 = 1.633 µg (k = 2,
		// GUM 6.2–6.3) → shown as 0.002 mg.
		expect(massLine({ massUg: 2184000, expandedUg: 1.633 })).toBe('2184.000 ± 0.002 mg');
		expect(massLine({ massUg: 2184, expandedUg: 12, decimals: 2 })).toBe('2.18 ± 0.02 mg');
		expect(massLine({ massUg: 2184, expandedUg: 10, decimals: 2 })).toBe('2.18 ± 0.01 mg');
		expect(massLine({ massUg: 2184, expandedUg: null })).toBe('2.184 mg');
		expect(massLine({ massUg: null })).toBe('mass not recorded');
	});
});

describe('sheets', () => {
	for (const [format, size] of [
		['a4', [595.28, 841.89]],
		['letter', [612, 792]]
	] as const) {
		it(`${format} page is ${size[0]} × ${size[1]} pt (ISO 32000-1: 1 pt = 1/72 in; ${format === 'a4' ? 'ISO 216 A4 210 × 297 mm' : 'US Letter 8.5 × 11 in'})`, async () => {
			const pdf = await render([label(0)], { format });
			const info = pdfinfo(pdf);
			expect(info.width).toBeCloseTo(size[0], 1);
			expect(info.height).toBeCloseTo(size[1], 1);
		});
	}

	it('A4: 70 labels fill 3 sheets and each decodes at its own grid position', async () => {
		const labels = Array.from({ length: 70 }, (_, i) => label(i));
		const pdf = await render(labels, { format: 'a4' });
		expect(pdfinfo(pdf).pages).toBe(3);
		const g = GRID.a4;
		for (const page of [1, 3]) {
			const img = rasterise(pdf, page, 300);
			const onPage = page === 1 ? 30 : 10;
			for (let slot = 0; slot < g.cols * g.rows; slot++) {
				const x = g.left + (slot % g.cols) * g.pitchX;
				const y = g.top + Math.floor(slot / g.cols) * g.pitchY;
				const qr = decodeAt(img, x, y, LABEL.w, LABEL.h);
				if (slot < onPage) expect(qr?.data, `page ${page} slot ${slot + 1}`).toBe(`${ORIGIN}/items/${itemPath(labels[(page - 1) * 30 + slot].code)}`);
				else expect(qr, `page ${page} slot ${slot + 1} stays blank`).toBeNull();
			}
		}
	});

	it('Letter: grid of 3 × 9, second sheet continues where the first ends', async () => {
		const labels = Array.from({ length: 30 }, (_, i) => label(i));
		const pdf = await render(labels, { format: 'letter' });
		expect(pdfinfo(pdf).pages).toBe(2);
		const g = GRID.letter;
		const last = rasterise(pdf, 1, 300);
		const x = g.left + 2 * g.pitchX;
		const y = g.top + 8 * g.pitchY;
		expect(decodeAt(last, x, y, LABEL.w, LABEL.h)?.data).toBe(`${ORIGIN}/items/${itemPath(labels[26].code)}`);
		const second = rasterise(pdf, 2, 300);
		expect(decodeAt(second, g.left, g.top, LABEL.w, LABEL.h)?.data).toBe(`${ORIGIN}/items/${itemPath(labels[27].code)}`);
		expect(decodeAt(second, g.left + 2 * g.pitchX, g.top, LABEL.w, LABEL.h)?.data).toBe(`${ORIGIN}/items/${itemPath(labels[29].code)}`);
		expect(decodeAt(second, g.left, g.top + g.pitchY, LABEL.w, LABEL.h)).toBeNull();
	});

	it('starts at a chosen position of a partly used sheet', async () => {
		const labels = Array.from({ length: 3 }, (_, i) => label(i));
		const pdf = await render(labels, { format: 'a4', startAt: 5 });
		const g = GRID.a4;
		const img = rasterise(pdf, 1, 300);
		const at = (slot: number) => decodeAt(img, g.left + (slot % 3) * g.pitchX, g.top + Math.floor(slot / 3) * g.pitchY, LABEL.w, LABEL.h);
		for (const s of [0, 1, 2, 3]) expect(at(s), `slot ${s + 1} is left free`).toBeNull();
		expect(at(4)?.data).toBe(`${ORIGIN}/items/${itemPath(labels[0].code)}`);
		expect(at(6)?.data).toBe(`${ORIGIN}/items/${itemPath(labels[2].code)}`);
	});

	it('shifts the whole grid by the printer offsets', async () => {
		const pdf0 = await render([label(0)], { format: 'a4' });
		const pdf1 = await render([label(0)], { format: 'a4', offsetXmm: 4, offsetYmm: 3 });
		const g = GRID.a4;
		const a = decodeAt(rasterise(pdf0, 1, 300), g.left - 5, g.top - 5, LABEL.w + 10, LABEL.h + 10)!;
		const b = decodeAt(rasterise(pdf1, 1, 300), g.left - 5, g.top - 5, LABEL.w + 10, LABEL.h + 10)!;
		const mm = 300 / 25.4;
		expect(b.location.topLeftCorner.x - a.location.topLeftCorner.x).toBeCloseTo(4 * mm, -0.5);
		expect(b.location.topLeftCorner.y - a.location.topLeftCorner.y).toBeCloseTo(3 * mm, -0.5);
	});
});

describe('input checks', () => {
	it('refuses a code whose check character is wrong', async () => {
		await expect(render([label(0, { code: 'TRN-00042/Z' })], { format: 'thermal' })).rejects.toThrow(/check character is Z, expected G/);
		// the older form is read on input, but a label is always printed in the current one
		await expect(render([label(0, { code: legacyCode(formatCode('TRN', 42)) })], { format: 'thermal' })).rejects.toThrow(/PREFIX-NNNNN\/C/);
	});

	it('refuses offsets beyond ±10 mm and a start position off the sheet', () => {
		expect(() => renderLabels([], { format: 'a4', offsetXmm: 12 })).toThrow(/offsetX/);
		expect(() => renderLabels([], { format: 'a4', startAt: 31 })).toThrow(/1 to 30/);
		expect(() => renderLabels([], { format: 'letter', startAt: 28 })).toThrow(/1 to 27/);
		expect(() => renderLabels([], { format: 'thermal', startAt: 2 })).toThrow(/1 to 1/);
		expect(() => renderLabels([], { format: 'a5' as never })).toThrow(/format/);
	});
});

describe('streaming', () => {
	it('sends the first pages before the last label has been read from the source', async () => {
		let pulled = 0;
		async function* source() {
			for (let i = 0; i < 600; i++) {
				pulled++;
				yield label(i);
				if (i % 30 === 0) await new Promise((r) => setImmediate(r));
			}
		}
		const stream = renderLabels(source(), { format: 'a4', origin: ORIGIN });
		let pulledAtFirstChunk = -1;
		let bytes = 0;
		for await (const chunk of stream) {
			if (pulledAtFirstChunk < 0 && bytes > 0) pulledAtFirstChunk = pulled;
			bytes += chunk.length;
		}
		expect(pulled).toBe(600);
		expect(pulledAtFirstChunk).toBeGreaterThan(0);
		expect(pulledAtFirstChunk).toBeLessThan(600);
	});

	it('stops pulling labels while nobody reads the stream (backpressure)', async () => {
		let pulled = 0;
		function* source() {
			for (let i = 0; i < 20000; i++) {
				pulled++;
				yield label(i);
			}
		}
		const stream = renderLabels(source(), { format: 'thermal', origin: ORIGIN });
		await new Promise((r) => setTimeout(r, 1500));
		const stalled = pulled;
		expect(stalled).toBeGreaterThan(0);
		expect(stalled).toBeLessThan(20000);
		await new Promise((r) => setTimeout(r, 300));
		expect(pulled).toBe(stalled);
		stream.destroy();
	});
});
