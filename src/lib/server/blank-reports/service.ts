import { randomUUID } from 'node:crypto';
import { QueryTypes, type Sequelize } from 'sequelize';
import { ApiProblem } from '../api';
import { canSeeLab, labCondition } from '../auth/scope';
import { config } from '../config';
import { appendTrail } from '../trail';
import { trailActor, type Who } from '../registry/common';
import { blankKindOf, computeReport, methodNotes, type ReportResults, type RoleRow } from '../../domain/blank-report';
import { DEFAULT_BLANK_SETTINGS, settingsOf, type BlankSettings } from '../../domain/blanks';
import { csvProblem, parseBlankControlCsv, type CsvIssue } from './parse';
import { documentView, storeDocument, type DocumentRow } from '../documents/store';
import { megabytes } from '../documents/types';
import type { StorageTarget } from '../documents/objects';

export interface NewReport {
	title: string;
	fileName: string;
	contentType: string | null;
	bytes: Uint8Array;
	/** the report's settings; what is left out takes the defaults */
	settings?: Partial<BlankSettings>;
}

/**
 * Reads the report settings an upload may carry (query parameters adjust=holm|bh|none,
 * limits=currie|classical, minBlanks=2…100); anything else is refused with the parameter named.
 */
export function settingsFromQuery(q: URLSearchParams): Partial<BlankSettings> {
	const out: Partial<BlankSettings> = {};
	const fields: Record<string, string> = {};
	const adjust = q.get('adjust');
	if (adjust !== null) {
		if (adjust === 'holm' || adjust === 'bh' || adjust === 'none') out.adjustment = adjust;
		else fields.adjust = `"${adjust.slice(0, 20)}" is not holm, bh or none`;
	}
	const limits = q.get('limits');
	if (limits !== null) {
		if (limits === 'currie' || limits === 'classical') out.limits = limits;
		else fields.limits = `"${limits.slice(0, 20)}" is not currie or classical`;
	}
	const min = q.get('minBlanks');
	if (min !== null) {
		const n = Number(min);
		if (/^\d+$/.test(min) && n >= 2 && n <= 100) out.minBlanks = n;
		else fields.minBlanks = `"${min.slice(0, 20)}" is not a whole number from 2 to 100`;
	}
	const bad = Object.entries(fields);
	if (bad.length) throw new ApiProblem(422, 'invalid_input', `${bad.map(([k, v]) => `${k}: ${v}`).join('; ')}. Nothing was stored.`, fields);
	return out;
}

/**
 * Reads and drops what is left of a refused upload, so that the refusal reaches the client: a
 * connection closed with unread data in it is reset, and the reset can take the answer with it.
 * Bounded by the server's body size limit (BODY_SIZE_LIMIT), past which the adapter ends the request.
 */
async function discardRest(reader: ReadableStreamDefaultReader<Uint8Array>): Promise<void> {
	try {
		while (!(await reader.read()).done);
	} catch {
		/* the request ended early: nothing is left to read */
	}
}

/** Reads a request body into memory up to `max` bytes (a blank-control table is parsed whole). */
export async function readLimited(body: ReadableStream<Uint8Array> | null, declared: number | null, max = config.documents.reportMaxBytes): Promise<Uint8Array> {
	const tooLarge = () => new ApiProblem(413, 'too_large', `The file is larger than the limit of ${megabytes(max)} for a blank-control table; nothing was stored.`, { file: `larger than ${megabytes(max)}` });
	if (declared !== null && declared > max) {
		if (body) await discardRest(body.getReader());
		throw tooLarge();
	}
	if (!body) return new Uint8Array();
	const chunks: Uint8Array[] = [];
	let size = 0;
	const reader = body.getReader();
	try {
		while (true) {
			const { done, value } = await reader.read();
			if (done) break;
			size += value.length;
			if (size > max) {
				await discardRest(reader);
				throw tooLarge();
			}
			chunks.push(value);
		}
	} catch (e) {
		if (e instanceof ApiProblem) throw e;
		if ((e as { status?: number })?.status === 413) throw tooLarge();
		throw new ApiProblem(400, 'upload_interrupted', 'The upload was interrupted before the whole file arrived; nothing was stored.');
	}
	return Buffer.concat(chunks);
}

interface ItemLite {
	id: string;
	code: string;
	kind: string;
	description: string;
	holder_lab_id: string | null;
}

/**
 * Parses, checks and computes a blank-control table, then stores the original file as a document
 * and the report, its rows, its links to the analysed items and blanks and a trail event, all in
 * one transaction after the file is in storage. Any problem refuses the whole upload.
 */
export async function createReport(sq: Sequelize, who: Who, input: NewReport, opts: { target?: StorageTarget } = {}) {
	const title = input.title.trim();
	if (!title) throw new ApiProblem(422, 'invalid_input', 'Give the report a title.', { title: 'is required' });
	if (title.length > 200) throw new ApiProblem(422, 'invalid_input', 'The title is longer than 200 characters.', { title: 'at most 200 characters' });
	const { rows, notes } = parseBlankControlCsv(input.bytes);

	const codes = [...new Set(rows.map((r) => r.code))];
	const found = await sq.query<ItemLite>('SELECT id, code, kind, description, holder_lab_id FROM items WHERE code IN (:codes)', { type: QueryTypes.SELECT, replacements: { codes } });
	const byCode = new Map(found.filter((i) => canSeeLab(who, i.holder_lab_id)).map((i) => [i.code, i]));
	const issues: CsvIssue[] = [];
	const reported = new Set<string>();
	for (const r of rows) {
		if (!byCode.has(r.code) && !reported.has(r.code)) {
			reported.add(r.code);
			issues.push({ row: r.line, column: 'sample_or_blank', message: `no item ${r.code} is visible to you` });
		}
	}
	if (issues.length) throw csvProblem(issues, 'unknown_item');
	const withRoles: RoleRow[] = rows.map((r) => {
		const item = byCode.get(r.code)!;
		return item.kind === 'blank' ? { ...r, role: 'blank', blankKind: blankKindOf(item.description) } : { ...r, role: 'sample' };
	});
	if (!withRoles.some((r) => r.role === 'blank')) {
		throw csvProblem([{ row: 2, column: 'sample_or_blank', message: 'no row names a blank item (an item of kind blank); a blank-control report needs at least one blank' }], 'no_blank');
	}
	if (!withRoles.some((r) => r.role === 'sample')) {
		throw csvProblem([{ row: 2, column: 'sample_or_blank', message: 'every row names a blank; name the analysed aliquot in the rows of the sample' }], 'no_sample');
	}
	const settings = settingsOf({ ...DEFAULT_BLANK_SETTINGS, ...(input.settings ?? {}) });
	const results = computeReport(withRoles, settings);
	const reportId = randomUUID();
	const labId = who.role === 'lab_member' ? who.labId : null;
	const links = [...byCode.values()].map((i) => ({ item_id: i.id, role: i.kind === 'blank' ? 'blank' : 'sample' }));

	const doc = await storeDocument(
		sq,
		who,
		{
			subject: { type: 'blank_control_report', id: reportId, labId, label: title, href: `/reports/${reportId}` },
			kind: 'blank_control_report',
			name: input.fileName || 'blank-control.csv',
			// it parsed as a CSV table, whatever the browser declared
			contentType: 'text/csv',
			body: [input.bytes],
			description: `Original table of the blank-control report "${title}"`
		},
		{
			target: opts.target,
			maxBytes: config.documents.reportMaxBytes,
			extra: async (t, d) => {
				await sq.query(
					`INSERT INTO blank_control_reports (id, title, lab_id, document_id, settings, results, notes, flagged, created_by)
					 VALUES (:id, :title, :labId, :docId, CAST(:settings AS jsonb), CAST(:results AS jsonb), CAST(:notes AS jsonb), :flagged, :by)`,
					{
						transaction: t,
						replacements: { id: reportId, title, labId, docId: d.id, settings: JSON.stringify(results.settings), results: JSON.stringify(results), notes: JSON.stringify(notes), flagged: results.flagged, by: who.id }
					}
				);
				await sq.query(
					`INSERT INTO blank_control_report_items (report_id, item_id, role)
					 SELECT :id, x.item_id, x.role FROM jsonb_to_recordset(CAST(:links AS jsonb)) AS x(item_id uuid, role text)`,
					{ transaction: t, replacements: { id: reportId, links: JSON.stringify(links) } }
				);
				const stored = withRoles.map((r) => ({ line: r.line, analyte: r.analyte, enantiomer: r.enantiomer, item_id: byCode.get(r.code)!.id, role: r.role, replicate: r.replicate, value: r.value, unit: r.unit, uncertainty: r.uncertainty }));
				await sq.query(
					`INSERT INTO blank_control_rows (report_id, line, analyte, enantiomer, item_id, role, replicate, value, unit, uncertainty)
					 SELECT :id, x.line, x.analyte, x.enantiomer, x.item_id, x.role, x.replicate, x.value, x.unit, x.uncertainty
					 FROM jsonb_to_recordset(CAST(:rows AS jsonb)) AS x(line int, analyte text, enantiomer text, item_id uuid, role text, replicate int, value float8, unit text, uncertainty float8)`,
					{ transaction: t, replacements: { id: reportId, rows: JSON.stringify(stored) } }
				);
				await appendTrail(sq, t, {
					actor: trailActor(who),
					action: 'blank_control_report.created',
					subjectType: 'blank_control_report',
					subjectId: reportId,
					after: { title, labId, documentId: d.id, sha256: d.sha256, rows: rows.length, items: links.map((l) => ({ id: l.item_id, role: l.role })), flagged: results.flagged }
				});
			}
		}
	);
	cache.set(reportId, results);
	return getReport(sq, who, reportId, doc);
}

/**
 * Results are computed on read from the stored rows with the rules of this version
 * (METHOD_VERSION), so no report shows a verdict of older rules; the results column keeps what was
 * computed at upload as part of the append-only record. The rows never change, so the computed
 * results (with their Monte-Carlo runs) are kept per report in memory.
 */
const cache = new Map<string, ReportResults>();
const CACHE_MAX = 200;

interface StoredRow {
	line: number;
	analyte: string;
	enantiomer: 'L' | 'D' | null;
	code: string;
	kind: string;
	description: string;
	role: 'sample' | 'blank';
	replicate: number;
	value: number;
	unit: string;
	uncertainty: number | null;
}

async function storedRows(sq: Sequelize, ids: string[]): Promise<Map<string, RoleRow[]>> {
	const rows = await sq.query<StoredRow & { report_id: string }>(
		`SELECT w.report_id, w.line, w.analyte, w.enantiomer, i.code, i.kind, i.description, w.role, w.replicate, w.value, w.unit, w.uncertainty
		 FROM blank_control_rows w JOIN items i ON i.id = w.item_id WHERE w.report_id IN (:ids) ORDER BY w.report_id, w.line`,
		{ type: QueryTypes.SELECT, replacements: { ids } }
	);
	const out = new Map<string, RoleRow[]>();
	for (const r of rows) {
		if (!out.has(r.report_id)) out.set(r.report_id, []);
		out.get(r.report_id)!.push({
			line: r.line, analyte: r.analyte, enantiomer: r.enantiomer, code: r.code, role: r.role, replicate: r.replicate, value: Number(r.value), unit: r.unit,
			uncertainty: r.uncertainty === null ? null : Number(r.uncertainty),
			...(r.role === 'blank' ? { blankKind: blankKindOf(r.description) } : {})
		});
	}
	return out;
}

/** A report's results under the current rules, from its stored rows (cached). */
async function resultsOf(sq: Sequelize, id: string, stored: Partial<BlankSettings>): Promise<ReportResults> {
	const hit = cache.get(id);
	if (hit) return hit;
	const rows = (await storedRows(sq, [id])).get(id) ?? [];
	const results = computeReport(rows, stored);
	if (cache.size >= CACHE_MAX) cache.delete(cache.keys().next().value!);
	cache.set(id, results);
	return results;
}

interface ReportRow {
	id: string;
	title: string;
	lab_id: string | null;
	lab_name: string | null;
	document_id: string;
	settings: Partial<BlankSettings>;
	notes: string[];
	flagged: number;
	created_by_label: string | null;
	created_at: Date;
}

const REPORT_SELECT = `SELECT r.id, r.title, r.lab_id, l.name AS lab_name, r.document_id, r.settings, r.notes, r.flagged, u.email AS created_by_label, r.created_at
	FROM blank_control_reports r LEFT JOIN labs l ON l.id = r.lab_id LEFT JOIN users u ON u.id = r.created_by`;

function summary(r: ReportRow, results: Pick<ReportResults, 'flagged' | 'analytes'>) {
	return {
		id: r.id,
		title: r.title,
		lab: r.lab_id === null ? { id: null, name: 'Facility' } : { id: r.lab_id, name: r.lab_name ?? '' },
		flagged: results.flagged,
		analytes: results.analytes.map((a) => a.analyte),
		createdBy: r.created_by_label,
		createdAt: new Date(r.created_at).toISOString(),
		href: `/reports/${r.id}`
	};
}
export type ReportSummary = ReturnType<typeof summary>;

/** A report as the viewer may see it (same 404 for unknown and out of sight), with its items and original file. */
export async function getReport(sq: Sequelize, who: Pick<Who, 'role' | 'labId'>, id: string, doc?: DocumentRow) {
	const [r] = await sq.query<ReportRow>(`${REPORT_SELECT} WHERE r.id = :id`, { type: QueryTypes.SELECT, replacements: { id } });
	if (!r || !canSeeLab(who, r.lab_id)) throw new ApiProblem(404, 'not_found', 'No such blank-control report is visible to you.');
	const items = await sq.query<{ code: string; role: 'sample' | 'blank'; description: string; holder_lab_id: string | null }>(
		`SELECT i.code, x.role, i.description, i.holder_lab_id FROM blank_control_report_items x JOIN items i ON i.id = x.item_id WHERE x.report_id = :id ORDER BY x.role DESC, i.code`,
		{ type: QueryTypes.SELECT, replacements: { id } }
	);
	const [d] = doc ? [doc] : await sq.query<DocumentRow>(`SELECT d.*, u.email AS uploaded_by_label FROM documents d LEFT JOIN users u ON u.id = d.uploaded_by WHERE d.id = :id`, { type: QueryTypes.SELECT, replacements: { id: r.document_id } });
	const results = await resultsOf(sq, r.id, r.settings);
	return {
		...summary(r, results),
		notes: r.notes,
		settings: results.settings,
		results,
		methodNotes: methodNotes(results.settings),
		items: items.map((i) => ({ code: i.code, role: i.role, description: i.description, visible: canSeeLab(who, i.holder_lab_id) })),
		document: documentView(d)
	};
}
export type ReportView = Awaited<ReturnType<typeof getReport>>;

/** Reports the viewer may see, newest first; with `itemId`, only those linked to that item. */
export async function listReports(sq: Sequelize, who: Pick<Who, 'role' | 'labId'>, opts: { itemId?: string; limit?: number } = {}) {
	const replacements: Record<string, unknown> = { limit: Math.min(opts.limit ?? 200, 500) };
	let where = 'WHERE true' + labCondition(who as never, 'r.lab_id', replacements);
	if (opts.itemId) {
		where += ' AND r.id IN (SELECT report_id FROM blank_control_report_items WHERE item_id = :itemId)';
		replacements.itemId = opts.itemId;
	}
	const rows = await sq.query<ReportRow>(`${REPORT_SELECT} ${where} ORDER BY r.created_at DESC, r.id LIMIT :limit`, { type: QueryTypes.SELECT, replacements });
	// flags do not depend on the Monte-Carlo runs, so the list computes without them
	const stored = rows.length ? await storedRows(sq, rows.map((r) => r.id)) : new Map<string, RoleRow[]>();
	return rows.map((r) => summary(r, cache.get(r.id) ?? computeReport(stored.get(r.id) ?? [], r.settings, { trials: 0 })));
}
