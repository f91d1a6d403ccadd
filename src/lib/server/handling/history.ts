import { createRequire } from 'node:module';
import { readFileSync } from 'node:fs';
import { z } from 'zod';
import { stringify } from 'csv-stringify/sync';
import PDFDocument from 'pdfkit';
import { QueryTypes, type Sequelize } from 'sequelize';
import { ATMOSPHERE_LABELS, type Atmosphere } from '../../domain/exposure';
import { findItem, type Who } from '../registry/common';

import { HISTORY_KINDS, type HistoryKind } from '../../vocabulary';
export { HISTORY_KINDS };

export interface HistoryEntry {
	at: string;
	kind: HistoryKind;
	actor: string;
	summary: string;
	/** the record behind the entry: a trail seq, a session or weighing id */
	ref: string;
}

const day = z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date as YYYY-MM-DD');
export const historyQuery = z.strictObject({
	from: day.optional(),
	to: day.optional(),
	actor: z.string().trim().max(254).optional(),
	kind: z.enum(HISTORY_KINDS, { error: `must be one of ${HISTORY_KINDS.join(', ')}` }).optional(),
	format: z.enum(['json', 'csv', 'pdf'], { error: 'must be json, csv or pdf' }).optional()
});
export type HistoryQuery = z.infer<typeof historyQuery>;

const iso = (d: Date | string) => new Date(d).toISOString();
const mg = (ug: number) => `${(ug / 1000).toFixed(3)} mg`;

/**
 * One item's history for an auditor, in one chronological list: where it came from and what was
 * split from it (lineage), who held it (custody: the trail's events on the item), the handling
 * sessions it or its ancestors before its split were in, its weighings, and the blanks exposed with
 * it (or, for a blank, the sessions it witnessed). Filters: from/to (UTC days, inclusive), actor
 * (part of a name or e-mail), kind.
 */
export async function itemHistory(sq: Sequelize, who: Who, codeText: string, q: HistoryQuery = {}) {
	const item = await findItem(sq, who, codeText);
	const r = { id: item.id };
	const out: HistoryEntry[] = [];

	const splits = await sq.query<{ id: string; at: Date; actor: string | null; parent_code: string; parent_id: string; children: string[]; loss_ug: number; session: string | null }>(
		`SELECT sp.id, sp.at, u.email AS actor, p.code AS parent_code, sp.parent_id, sp.loss_ug, sp.handling_session_id AS session,
		        (SELECT array_agg(k.code ORDER BY k.serial) FROM items k WHERE k.split_id = sp.id) AS children
		 FROM splits sp JOIN items p ON p.id = sp.parent_id LEFT JOIN users u ON u.id = sp.operator_id
		 WHERE sp.parent_id = :id OR sp.id = (SELECT split_id FROM items WHERE id = :id)`,
		{ type: QueryTypes.SELECT, replacements: r }
	);
	for (const s of splits) {
		const flag = s.session ? '' : ' — no handling session on record';
		out.push(
			s.parent_id === item.id
				? { at: iso(s.at), kind: 'lineage', actor: s.actor ?? 'system', summary: `Split into ${s.children.join(', ')} (loss ${s.loss_ug} µg)${flag}`, ref: `split ${s.id}` }
				: { at: iso(s.at), kind: 'lineage', actor: s.actor ?? 'system', summary: `Split off ${s.parent_code}${flag}`, ref: `split ${s.id}` }
		);
	}
	if (!item.parent_id) out.push({ at: iso(item.created_at), kind: 'lineage', actor: 'registry', summary: `Registered as ${item.kind === 'blank' ? 'a blank' : 'a parent specimen'} in ${item.prefix}`, ref: `item ${item.code}` });

	const trail = await sq.query<{ seq: number; at: Date; actor_label: string; action: string; after: Record<string, unknown> | null }>(
		`SELECT seq, at, actor_label, action, after FROM trail_events WHERE subject_type = 'item' AND subject_id = :sid ORDER BY seq`,
		{ type: QueryTypes.SELECT, replacements: { sid: item.id } }
	);
	for (const e of trail) {
		if (e.action === 'item.split') continue; // shown from the split itself
		const a = e.after ?? {};
		const holder = typeof a.state === 'string' ? ` (${String(a.state).replace('_', ' ')})` : '';
		out.push({ at: iso(e.at), kind: 'custody', actor: e.actor_label, summary: `${e.action.replace('item.', '').replaceAll('_', ' ')}${holder}${a.note ? ` — ${a.note}` : ''}`, ref: `trail #${e.seq}` });
	}

	const weighings = await sq.query<{ id: string; at: Date; actor: string | null; purpose: string; net_ug: number; expanded_ug: number; balance: string; below_minimum: boolean }>(
		`SELECT w.id, w.at, u.email AS actor, w.purpose, w.net_ug, w.expanded_ug, b.name AS balance, w.below_minimum
		 FROM weighings w JOIN balances b ON b.id = w.balance_id LEFT JOIN users u ON u.id = w.operator_id WHERE w.item_id = :id`,
		{ type: QueryTypes.SELECT, replacements: r }
	);
	for (const w of weighings) {
		out.push({
			at: iso(w.at), kind: 'weighing', actor: w.actor ?? 'system',
			summary: `Weighed ${mg(w.net_ug)} ± ${w.expanded_ug.toFixed(2)} µg (k = 2) on ${w.balance} (${w.purpose.replaceAll('_', ' ')})${w.below_minimum ? ', below the minimum weight' : ''}`,
			ref: `weighing ${w.id}`
		});
	}

	// sessions of the item, and of its ancestors before the split that led to the item
	const sessions = await sq.query<{ id: string; started_at: Date; ended_at: Date; atmosphere: Atmosphere; operator: string; purpose: string; on_code: string; level: number; blanks: string[] | null; as_blank: boolean }>(
		`WITH RECURSIVE up AS (
			SELECT id, parent_id, 'infinity'::timestamptz AS cutoff, 0 AS level FROM items WHERE id = :id
			UNION ALL
			SELECT p.id, p.parent_id, least(up.cutoff, (SELECT at FROM splits WHERE id = c.split_id)), up.level + 1
			FROM up JOIN items c ON c.id = up.id JOIN items p ON p.id = up.parent_id
		)
		SELECT s.id, s.started_at, s.ended_at, s.atmosphere, u.email AS operator, s.purpose, i.code AS on_code, up.level,
		       (SELECT array_agg(b.code ORDER BY b.serial) FROM handling_session_blanks hb JOIN items b ON b.id = hb.blank_item_id WHERE hb.session_id = s.id) AS blanks,
		       false AS as_blank
		FROM up JOIN handling_session_items hi ON hi.item_id = up.id JOIN handling_sessions s ON s.id = hi.session_id
		JOIN users u ON u.id = s.operator_id JOIN items i ON i.id = up.id
		WHERE up.level = 0 OR s.started_at < up.cutoff
		UNION ALL
		SELECT s.id, s.started_at, s.ended_at, s.atmosphere, u.email, s.purpose,
		       (SELECT string_agg(i.code, ', ' ORDER BY i.serial) FROM handling_session_items hi JOIN items i ON i.id = hi.item_id WHERE hi.session_id = s.id), 0, NULL, true
		FROM handling_session_blanks hb JOIN handling_sessions s ON s.id = hb.session_id JOIN users u ON u.id = s.operator_id
		WHERE hb.blank_item_id = :id
		ORDER BY level`,
		{ type: QueryTypes.SELECT, replacements: r }
	);
	const seen = new Set<string>();
	for (const s of sessions) {
		// a session listing several generations counts once, as the nearest one's (rows come by level)
		const key = `${s.id}:${s.as_blank}`;
		if (seen.has(key)) continue;
		seen.add(key);
		const minutes = Math.round((new Date(s.ended_at).getTime() - new Date(s.started_at).getTime()) / 60_000);
		const what = `${ATMOSPHERE_LABELS[s.atmosphere]}, ${minutes} min, until ${iso(s.ended_at).slice(0, 16).replace('T', ' ')} UTC — ${s.purpose}`;
		if (s.as_blank) {
			out.push({ at: iso(s.started_at), kind: 'blank', actor: s.operator, summary: `Exposed as a blank beside ${s.on_code}: ${what}`, ref: `session ${s.id}` });
			continue;
		}
		const inherited = s.level > 0 ? ` (inherited from ${s.on_code})` : '';
		out.push({ at: iso(s.started_at), kind: 'handling', actor: s.operator, summary: `Handling session${inherited}: ${what}`, ref: `session ${s.id}` });
		out.push({
			at: iso(s.started_at), kind: 'blank', actor: s.operator,
			summary: s.blanks?.length ? `Blanks exposed alongside: ${s.blanks.join(', ')}` : 'No blank exposed alongside this session',
			ref: `session ${s.id}`
		});
	}

	out.sort((a, b) => (a.at < b.at ? -1 : a.at > b.at ? 1 : HISTORY_KINDS.indexOf(a.kind) - HISTORY_KINDS.indexOf(b.kind)));
	const actor = q.actor?.toLowerCase();
	const entries = out.filter(
		(e) =>
			(!q.kind || e.kind === q.kind) &&
			(!q.from || e.at.slice(0, 10) >= q.from) &&
			(!q.to || e.at.slice(0, 10) <= q.to) &&
			(!actor || e.actor.toLowerCase().includes(actor))
	);
	return { code: item.code, collection: item.prefix, description: item.description, entries, total: out.length };
}
export type ItemHistory = Awaited<ReturnType<typeof itemHistory>>;

export function historyCsv(h: ItemHistory): string {
	return stringify(
		h.entries.map((e) => [e.at, e.kind, e.actor, e.summary, e.ref]),
		{ header: true, columns: ['at_utc', 'kind', 'actor', 'summary', 'record'] }
	);
}

const requireHere = createRequire(import.meta.url);
let font: Buffer | null = null;

/** The history as a PDF (A4, Atkinson Hyperlegible), generated in memory. */
export function historyPdf(h: ItemHistory, filters: string): Promise<Buffer> {
	font ??= readFileSync(requireHere.resolve('@fontsource/atkinson-hyperlegible/files/atkinson-hyperlegible-latin-400-normal.woff'));
	const doc = new PDFDocument({ size: 'A4', margin: 48, info: { Title: `History of ${h.code}`, Producer: 'Regolog' } });
	const chunks: Buffer[] = [];
	doc.on('data', (c: Buffer) => chunks.push(c));
	const done = new Promise<Buffer>((resolve, reject) => {
		doc.on('end', () => resolve(Buffer.concat(chunks)));
		doc.on('error', reject);
	});
	doc.registerFont('body', font);
	doc.font('body').fontSize(16).text(`History of ${h.code}`);
	doc.fontSize(10).fillColor('#555555').text(`${h.collection} · ${h.description}`);
	doc.text(`${h.entries.length} of ${h.total} entries · ${filters || 'no filter'} · produced ${new Date().toISOString().slice(0, 16).replace('T', ' ')} UTC`);
	doc.moveDown();
	for (const e of h.entries) {
		doc.fillColor('#000000').fontSize(9).text(`${e.at.slice(0, 19).replace('T', ' ')} UTC · ${e.kind} · ${e.actor}`);
		doc.fontSize(10).text(e.summary, { indent: 12 });
		doc.fontSize(8).fillColor('#555555').text(e.ref, { indent: 12 });
		doc.moveDown(0.4);
	}
	doc.end();
	return done;
}
