import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import { request as httpRequest } from 'node:http';
import { mean as ssMean, sampleStandardDeviation as ssSd } from 'simple-statistics';
import { signedIn, DEMO, BASE, type Client } from '../helpers/http';
import { demoReportItems } from '../helpers/documents';
import { pdftext } from '../helpers/pdf';
import { db, closeDb } from '../../src/lib/server/db';
import { demoCsv } from '../../src/lib/server/blank-reports/demo';
import { COLUMNS, METHOD_VERSION } from '../../src/lib/domain/blank-report';
import { LIMITATIONS } from '../../src/lib/domain/blanks';
import { mistype } from '../helpers/registry';

const sq = db();
let fennick: Client;
let marrow: Client;
let sample: string;
let blank: string;
let witness: string;
const HEADER = COLUMNS.join(',');

const counts = async () =>
	(await sq.query<{ d: string; r: string; w: string }>(
		'SELECT (SELECT count(*) FROM documents) AS d, (SELECT count(*) FROM blank_control_reports) AS r, (SELECT count(*) FROM blank_control_rows) AS w',
		{ type: QueryTypes.SELECT }
	))[0];

/** Sends on a connection of its own that is not reused: a refusal before the body is read may close it. */
function sendAlone(c: Client, body: string): Promise<{ status: number; body: any }> {
	return new Promise((resolve, reject) => {
		const url = new URL(`${BASE}/api/blank-control-reports?title=big&name=big.csv`);
		const req = httpRequest(url, { method: 'POST', agent: false, headers: { origin: BASE, cookie: c.cookie!, 'content-type': 'text/csv', 'content-length': Buffer.byteLength(body) } }, (res) => {
			let text = '';
			res.on('data', (d) => (text += d));
			res.on('end', () => resolve({ status: res.statusCode!, body: JSON.parse(text) }));
		});
		req.on('error', (e) => ((e as NodeJS.ErrnoException).code === 'EPIPE' || (e as NodeJS.ErrnoException).code === 'ECONNRESET' ? null : reject(e)));
		req.end(body);
	});
}

async function send(c: Client, body: string | Buffer, title = 'test report', name = 'table.csv') {
	const r = await fetch(`${BASE}/api/blank-control-reports?title=${encodeURIComponent(title)}&name=${encodeURIComponent(name)}`, {
		method: 'POST',
		headers: { origin: BASE, cookie: c.cookie!, 'content-type': 'text/csv' },
		body: body as never
	});
	return { status: r.status, body: await r.json() };
}

/** A small valid table: alanine L/D in the sample and three blank replicates each. */
const table = (s = sample, b = blank) =>
	[
		HEADER,
		`alanine,L,${s},1,10.0,nmol/g,0.5`,
		`alanine,D,${s},1,6.0,nmol/g,0.4`,
		...[1, 2, 3].flatMap((i) => [`alanine,L,${b},${i},${[0.9, 1.1, 1.0][i - 1]},nmol/g,`, `alanine,D,${b},${i},${[0.5, 0.7, 0.6][i - 1]},nmol/g,`])
	].join('\n') + '\n';

/** Sends a bad table and checks the refusal names its row (and column) and stores nothing. */
async function refused(body: string | Buffer, status: number, where: RegExp, code?: string, c = fennick) {
	const before = await counts();
	const r = await send(c, body);
	expect(r.status, JSON.stringify(r.body)).toBe(status);
	expect(r.body.error.message).toMatch(where);
	if (code) expect(r.body.error.code).toBe(code);
	expect(await counts()).toEqual(before);
	return r.body.error;
}

beforeAll(async () => {
	fennick = await signedIn(DEMO.fennick);
	marrow = await signedIn(DEMO.marrow);
	({ sample } = await demoReportItems(fennick));
	// the demo's two blank items, told apart by their descriptions (the kind of blank is read from there)
	const byStart = async (start: string) =>
		(await sq.query<{ code: string }>(`SELECT code FROM items WHERE kind = 'blank' AND description LIKE :d LIMIT 1`, { type: QueryTypes.SELECT, replacements: { d: `${start}%` } }))[0].code;
	blank = await byStart('Procedural blank: baked fused-silica vial');
	witness = await byStart('Witness coupon: baked aluminium foil');
});
afterAll(() => closeDb());

describe('blank-control reports: a good table', () => {
	it('computes the demo table, stores the original file beside the results and links the items', async () => {
		const csv = demoCsv(sample, blank, witness);
		const r = await send(fennick, csv, 'demo again');
		expect(r.status).toBe(201);
		const rep = r.body.report;
		expect(rep.items).toEqual(expect.arrayContaining([expect.objectContaining({ code: sample, role: 'sample' }), expect.objectContaining({ code: blank, role: 'blank' }), expect.objectContaining({ code: witness, role: 'blank' })]));
		expect(rep.document.sizeBytes).toBe(Buffer.byteLength(csv));
		const file = await fetch(BASE + rep.document.href, { headers: { cookie: fennick.cookie! } });
		expect(await file.text()).toBe(csv);

		const find = (name: string) => rep.results.analytes.find((a: { analyte: string }) => a.analyte === name);
		const ala = find('alanine');
		const blankL = [2.1, 2.6, 1.9, 2.4];
		// cross-checked with simple-statistics; classical LOD = b̄ + 3·s_b, LOQ = b̄ + 10·s_b (the k = 3
		// convention, Long & Winefordner, Anal. Chem. 55 (1983) 712A); Currie's σ₀ = s_b·√(1 + 1/n)
		// (Pure Appl. Chem. 67 (1995) 1699)
		const L = ala.blanks.find((b: { key: string }) => b.key === 'L').stats;
		expect(L.mean).toBeCloseTo(ssMean(blankL), 12);
		expect(L.sd).toBeCloseTo(ssSd(blankL), 12);
		expect(L.classical.lod).toBeCloseTo(ssMean(blankL) + 3 * ssSd(blankL), 12);
		expect(L.classical.loq).toBeCloseTo(ssMean(blankL) + 10 * ssSd(blankL), 12);
		expect(L.currie.sigma0).toBeCloseTo(ssSd(blankL) * Math.sqrt(1 + 1 / 4), 12);
		// the procedural blank corrects; the witness coupon is shown on its own
		expect(ala.blanks[0].kinds).toEqual(['procedural_blank']);
		expect(ala.blankKinds.map((b: { kind: string; used: boolean }) => [b.kind, b.used])).toEqual(expect.arrayContaining([['procedural_blank', true], ['witness_coupon', false]]));
		expect(ala.blankNote).toMatch(/witness coupons are shown on their own/);
		const s = ala.samples[0];
		// ee = (L − D)/(L + D) of blank-corrected replicate means (IUPAC Gold Book, "enantiomer excess")
		const cl = ssMean([14.8, 15.3, 15.0]) - ssMean(blankL);
		const cd = ssMean([9.1, 9.4, 9.0]) - ssMean([0.4, 0.6, 0.5, 0.5]);
		expect(s.ee.ee).toBeCloseTo((cl - cd) / (cl + cd), 12);
		expect(s.ee).toMatchObject({ status: 'quantified', significant: true, adjusted: { method: 'holm', significant: true } });
		expect(s.ee.U).toBeCloseTo(s.ee.k * s.ee.u, 12);
		expect(s.ee.interval.low).toBeCloseTo(s.ee.ee - s.ee.U, 12);
		expect(s.possibleContamination).toBe(true);

		// isovaline: a 5.7 % excess that three replicates a side cannot support once ν_eff is counted
		expect(find('isovaline').samples[0].ee).toMatchObject({ status: 'quantified', significant: false });
		const asp = find('aspartic acid').samples[0];
		expect(asp.parts.find((p: { key: string }) => p.key === 'L').result.flags).toMatchObject({ belowLod: true, belowLoq: true, blankDominated: true });
		expect(asp.ee).toMatchObject({ status: 'not_quantifiable', ee: null });
		expect(find('serine').samples[0].ee.instead.detected).toBe('L');
		const nva = find('norvaline').samples[0].ee;
		expect(nva).toMatchObject({ status: 'semi_quantitative', interval: { source: 'monte-carlo' } });
		expect(nva.mc.trials).toBe(1_000_000);
		// valine: weak limits from two blanks, significant alone but not after Holm's adjustment
		const val = find('valine').samples[0].ee;
		expect(val).toMatchObject({ weakLimits: true, significant: true, adjusted: { significant: false } });
		const gly = find('glycine').samples[0];
		// a single blank is a stated limitation, not an error, and no LOD is invented
		expect(gly.parts[0].result.blank.lod).toBeNull();
		expect(gly.limitations).toContain(LIMITATIONS.lodFromOneBlank);
		expect(gly.ee).toBeNull();
		expect(rep.methodNotes.join(' ')).toMatch(/Welch–Satterthwaite/);
		expect(rep.results.method).toBe(METHOD_VERSION);

		const rows = await sq.query<{ n: string }>('SELECT count(*) AS n FROM blank_control_rows WHERE report_id = :id', { type: QueryTypes.SELECT, replacements: { id: rep.id } });
		expect(Number(rows[0].n)).toBe(csv.trim().split('\n').length - 1);
		const items = await fennick.get(`/api/documents?subject=item&ref=${sample}`);
		expect(items.body.reports.map((x: { id: string }) => x.id)).toContain(rep.id);
	});

	it('reads its settings from the upload, and recomputes every report on read with the current rules', async () => {
		const bh = await fetch(`${BASE}/api/blank-control-reports?title=bh&name=t.csv&adjust=bh&limits=classical&minBlanks=4`, {
			method: 'POST', headers: { origin: BASE, cookie: fennick.cookie!, 'content-type': 'text/csv' }, body: table()
		});
		expect(bh.status).toBe(201);
		const rep = (await bh.json()).report;
		expect(rep.settings).toMatchObject({ adjustment: 'bh', limits: 'classical', minBlanks: 4 });
		// three blanks, fewer than the four asked for: weak limits, said in words
		const L = rep.results.analytes[0].blanks[0].stats;
		expect(L).toMatchObject({ n: 3, weak: true, used: 'classical' });
		expect(rep.results.analytes[0].samples[0].ee.adjusted.method).toBe('bh');
		expect(rep.methodNotes.join(' ')).toMatch(/Fewer than 4 blank replicates/);
		// the seeded demo report, stored when the database was seeded, is read with the current rules too
		const list = await fennick.get('/api/blank-control-reports');
		const seeded = list.body.reports.at(-1);
		const again = (await fennick.get(`/api/blank-control-reports/${seeded.id}`)).body.report;
		expect(again.results.method).toBe(METHOD_VERSION);
		expect(seeded.flagged).toBe(again.results.flagged);
	});

	it('refuses unknown settings, naming the parameter, and stores nothing', async () => {
		const before = await counts();
		const r = await fetch(`${BASE}/api/blank-control-reports?title=x&name=t.csv&adjust=bonferroni&minBlanks=1`, {
			method: 'POST', headers: { origin: BASE, cookie: fennick.cookie!, 'content-type': 'text/csv' }, body: table()
		});
		expect(r.status).toBe(422);
		const e = (await r.json()).error;
		expect(e.code).toBe('invalid_input');
		expect(e.fields).toMatchObject({ adjust: expect.stringMatching(/not holm, bh or none/), minBlanks: expect.stringMatching(/from 2 to 100/) });
		expect(await counts()).toEqual(before);
	});

	it('accepts a byte-order mark and says so', async () => {
		const r = await send(fennick, Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(table())]));
		expect(r.status).toBe(201);
		expect(r.body.report.notes).toContain('The file began with a UTF-8 byte-order mark; it was ignored.');
		expect(r.body.report.results.analytes[0].analyte).toBe('alanine');
	});

	it('states the limitation of a single blank instead of refusing', async () => {
		const csv = [HEADER, `isovaline,L,${sample},1,3.2,nmol/g,0.2`, `isovaline,D,${sample},1,3.0,nmol/g,0.2`, `isovaline,L,${blank},1,0.1,nmol/g,`, `isovaline,D,${blank},1,0.1,nmol/g,`].join('\n');
		const r = await send(fennick, csv);
		expect(r.status).toBe(201);
		const s = r.body.report.results.analytes[0].samples[0];
		expect(s.limitations).toEqual(expect.arrayContaining([LIMITATIONS.lodFromOneBlank, LIMITATIONS.eeNoLimit]));
		expect(s.parts[0].result.flags.belowLod).toBeNull();
		expect(s.ee).toMatchObject({ status: 'not_assessable', ee: null });
	});

	it('answers a PDF summary with the title, the flags and the original file’s checksum', async () => {
		const r = await send(fennick, demoCsv(sample, blank, witness), 'PDF check report');
		const pdf = await fetch(`${BASE}/api/blank-control-reports/${r.body.report.id}/pdf`, { headers: { cookie: fennick.cookie! } });
		expect(pdf.headers.get('content-type')).toBe('application/pdf');
		const text = pdftext(Buffer.from(await pdf.arrayBuffer())).replace(/\s+/g, ' ');
		expect(text).toContain('PDF check report');
		expect(text).toContain('may be contamination rather than an indigenous signal');
		expect(text).toContain('below LOD');
		expect(text).toContain(r.body.report.document.sha256.slice(0, 32));
		// the PDF shows ν_eff, k, the interval, the verdicts, the limits and why an ee is or is not quoted
		for (const t of ['nu_eff', '95 % interval', 'Holm', 'Semi-quantitative', 'Not quantifiable', 'weak', 'Currie 1995', 'G. L. Long and J. D. Winefordner', 'Welch–Satterthwaite', 'Monte-Carlo']) expect(text).toContain(t);
		const ala = r.body.report.results.analytes.find((a: { analyte: string }) => a.analyte === 'alanine').samples[0].ee;
		expect(text).toContain(`[${(ala.interval.low * 100).toFixed(1)} %, ${(ala.interval.high * 100).toFixed(1)} %]`);
	});

	it('offers the template with the layout’s header', async () => {
		const r = await fetch(`${BASE}/api/blank-control-reports/template`, { headers: { cookie: fennick.cookie! } });
		expect(r.headers.get('content-type')).toMatch(/^text\/csv/);
		expect((await r.text()).split('\r\n')[0]).toBe('analyte,enantiomer,sample_or_blank,replicate,value,unit,uncertainty');
	});

	it('another lab cannot see the report or use the items', async () => {
		const list = await fennick.get('/api/blank-control-reports');
		const id = list.body.reports[0].id;
		expect((await marrow.get(`/api/blank-control-reports/${id}`)).status).toBe(404);
		expect((await marrow.get(`/api/blank-control-reports/${id}/pdf`)).status).toBe(404);
		expect((await marrow.get('/api/blank-control-reports')).body.reports.map((x: { id: string }) => x.id)).not.toContain(id);
		await refused(table(), 422, /row 2, column sample_or_blank: no item .* is visible to you/, 'unknown_item', marrow);
	});
});

describe('blank-control reports: malformed tables are refused with row and column, nothing stored', () => {
	it('semicolons or tabs between columns', async () => {
		await refused(table().replaceAll(',', ';'), 422, /^row 1: the columns are separated by semicolons/, 'wrong_delimiter');
		await refused(table().replaceAll(',', '\t'), 422, /^row 1: the columns are separated by tabs/, 'wrong_delimiter');
	});

	it('a missing column, an extra column, a repeated column', async () => {
		const lines = table().split('\n');
		const drop = (i: number) => lines.map((l) => l.split(',').filter((_, j) => j !== i).join(',')).join('\n');
		await refused(drop(5), 422, /^row 1: missing column unit/, 'invalid_header');
		await refused(lines.map((l, i) => l + (l ? (i === 0 ? ',comment' : ',x') : '')).join('\n'), 422, /^row 1, column comment: "comment" is not a column/, 'invalid_header');
		await refused(lines.map((l, i) => l + (l ? (i === 0 ? ',value' : ',1') : '')).join('\n'), 422, /row 1, column value: the column "value" appears twice/);
	});

	it('the uncertainty column may be left out', async () => {
		const lines = table().split('\n').map((l) => l.split(',').slice(0, 6).join(','));
		const r = await send(fennick, lines.join('\n'));
		expect(r.status).toBe(201);
		expect(r.body.report.notes[0]).toMatch(/no uncertainty column/);
	});

	it('a row with too many or too few values', async () => {
		const lines = table().split('\n');
		lines[3] += ',9';
		await refused(lines.join('\n'), 422, /^row 4: 8 values where the header has 7 columns/);
	});

	it('non-numeric, decimal-comma and negative values and uncertainties', async () => {
		await refused(table().replace(',10.0,', ',ten,'), 422, /^row 2, column value: "ten" is not a number/);
		await refused(table().replace(',10.0,', ',"10,5",'), 422, /^row 2, column value: "10,5" has a decimal comma/);
		await refused(table().replace(',6.0,', ',-6.0,'), 422, /^row 3, column value: -6 is negative/);
		await refused(table().replace(',0.4\n', ',-0.4\n'), 422, /^row 3, column uncertainty: -0.4 is negative/);
		await refused(table().replace(',10.0,', ',,'), 422, /^row 2, column value: is empty/);
	});

	it('mixed units for one analyte', async () => {
		await refused(table().replace(',6.0,nmol/g,', ',6.0,ng/g,'), 422, /^row 3, column unit: "ng\/g" differs from "nmol\/g" used for alanine in row 2/);
	});

	it('bad enantiomers, replicates and codes', async () => {
		await refused(table().replace('alanine,L,', 'alanine,R,'), 422, /^row 2, column enantiomer: "R" is not L, D or empty/);
		await refused(table() + `glycine,L,${sample},1,5,nmol/g,\n`, 422, /row 10, column enantiomer: glycine is achiral/);
		await refused(table().replace(`alanine,D,${sample},1,`, `alanine,D,${sample},0,`), 422, /^row 3, column replicate: "0" is not a whole number from 1/);
		await refused(table().replace(`alanine,D,${sample},1,`, `alanine,L,${sample},1,`), 422, /^row 3, column replicate: replicate 1 of alanine \(L\) for .* is already in row 2/);
		await refused(table().replace(`alanine,L,${sample}`, `alanine,L,${mistype(sample)}`), 422, /^row 2, column sample_or_blank: ".*" is not an item code/);
		await refused(table().replace(`alanine,D,${sample},1,6.0`, `alanine,,${sample},1,6.0`), 422, /^row 3, column enantiomer: alanine has enantiomers in some rows and none in others/);
	});

	it('a table without blanks or without samples', async () => {
		const lines = table().split('\n');
		await refused(lines.slice(0, 3).join('\n'), 422, /no row names a blank item/, 'no_blank');
		await refused([lines[0], ...lines.slice(3)].join('\n'), 422, /every row names a blank/, 'no_sample');
	});

	it('an empty file, a header alone, UTF-16 text and an unclosed quote', async () => {
		await refused('', 422, /^row 1: the file is empty/, 'empty_file');
		await refused('\n\n  \n', 422, /^row 1: the file is empty/, 'empty_file');
		await refused(HEADER + '\n', 422, /^row 2: the file has a header but no data rows/, 'no_rows');
		await refused(Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(table(), 'utf16le')]), 422, /UTF-16/, 'invalid_encoding');
		await refused(table().replace('alanine,D', '"alanine,D'), 422, /^row \d+: a quoted value is not closed|^row \d+: a quote appears/);
	});

	it('a file over the size limit', async () => {
		const big = table() + `alanine,L,${blank},9,1.0,nmol/g,\n`.repeat(Math.ceil((2 * 1024 * 1024) / 30) + 10);
		const before = await counts();
		const r = await sendAlone(fennick, big);
		expect(r.status).toBe(413);
		expect(r.body.error.code).toBe('too_large');
		expect(r.body.error.message).toMatch(/larger than the limit of 2 MB for a blank-control table; nothing was stored/);
		expect(r.body.error.fields.file).toMatch(/larger than/);
		expect(await counts()).toEqual(before);
	});

	it('every problem of a file is listed with its row and column, up to a limit', async () => {
		const e = await refused(table().replace(',10.0,', ',x,').replace(',6.0,', ',y,'), 422, /^row 2, column value: "x" is not a number \(and 1 more problem\)/);
		expect(e.issues).toEqual([
			{ row: 2, column: 'value', message: '"x" is not a number' },
			{ row: 3, column: 'value', message: '"y" is not a number' }
		]);
	});
});
