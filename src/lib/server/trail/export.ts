// The trail as a bundle for offline verification (format: src/lib/domain/trail-verify.ts), streamed
// a slice of events at a time so a million events never sit in memory at once.
import { QueryTypes, type Sequelize } from 'sequelize';
import { BUNDLE_FORMAT, canonicalRawRow } from '../../domain/trail-verify';
import { listCheckpoints, listKeys } from './checkpoints';

const SLICE = 5000;

export interface BundleRange {
	from: number;
	to: number;
	events: number;
}

/**
 * The range a bundle covers: `to` at most the head; `from` moved down to just after the signed
 * checkpoint at or before it (or to 1), so the bundle's first event is anchored by a signature.
 */
export async function bundleRange(sq: Sequelize, want: { from?: number; to?: number }): Promise<BundleRange> {
	const [r] = await sq.query<{ head: number | null; anchor: number | null }>(
		`SELECT (SELECT max(seq) FROM trail_events) AS head,
		        (SELECT max(seq) FROM trail_checkpoints WHERE seq < CAST(:from AS bigint)) AS anchor`,
		{ type: QueryTypes.SELECT, replacements: { from: Math.max(1, want.from ?? 1) } }
	);
	const head = Number(r.head ?? 0);
	const to = Math.min(head, want.to ?? head);
	const from = want.from && want.from > 1 ? Number(r.anchor ?? 0) + 1 : 1;
	return { from, to, events: Math.max(0, to - from + 1) };
}

/** The bundle's lines, each ending in a newline, in the order the format gives. */
export async function* bundleLines(sq: Sequelize, range: BundleRange): AsyncGenerator<string> {
	const [keys, cps] = await Promise.all([listKeys(sq), listCheckpoints(sq, { after: range.from - 2, upTo: range.to })]);
	yield JSON.stringify({ type: 'bundle', format: BUNDLE_FORMAT, from: range.from, to: range.to, events: range.events, exportedAt: new Date().toISOString() }) + '\n';
	for (const k of keys) yield JSON.stringify({ type: 'key', ...k }) + '\n';
	for (const c of cps) yield JSON.stringify({ type: 'checkpoint', ...c }) + '\n';
	let written = 0;
	for (let lo = range.from; lo <= range.to; lo += SLICE) {
		const hi = Math.min(range.to, lo + SLICE - 1);
		const rows = await sq.query<{ line: string | null; seq: string; prev_hash: string; hash: string; legacy: string | null }>(
			`SELECT CASE WHEN body IS NOT NULL THEN '{"seq":' || seq || ',"prev":"' || prev_hash || '","hash":"' || hash || '","event":' || body || '}' END AS line,
			        seq::text, prev_hash, hash,
			        CASE WHEN body IS NULL THEN json_build_array(to_char(at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"'), actor_id, actor_label, action, subject_type, subject_id, before, after)::text END AS legacy
			 FROM trail_events WHERE seq BETWEEN :lo AND :hi ORDER BY trail_events.seq`,
			{ type: QueryTypes.SELECT, replacements: { lo, hi } }
		);
		let out = '';
		for (const r of rows) {
			if (r.line !== null) out += r.line + '\n';
			else {
				// an event written before bodies were stored: its canonical text rebuilt from the columns
				const [at, actorId, actorLabel, action, subjectType, subjectId, before, after] = JSON.parse(r.legacy!) as (string | null)[];
				const json = (v: unknown) => (v === null ? null : JSON.stringify(v));
				const body = canonicalRawRow([r.seq, at!, actorId, actorLabel!, action!, subjectType!, subjectId!, json(before), json(after), r.prev_hash, r.hash]);
				out += `{"seq":${r.seq},"prev":"${r.prev_hash}","hash":"${r.hash}","event":${body}}\n`;
			}
		}
		written += rows.length;
		yield out;
	}
	yield JSON.stringify({ type: 'end', events: written }) + '\n';
}

/** The bundle as a byte stream for a Response. */
export function bundleStream(sq: Sequelize, range: BundleRange): ReadableStream<Uint8Array> {
	const enc = new TextEncoder();
	const it = bundleLines(sq, range);
	return new ReadableStream<Uint8Array>({
		async pull(controller) {
			try {
				const { value, done } = await it.next();
				if (done) controller.close();
				else controller.enqueue(enc.encode(value));
			} catch (e) {
				controller.error(e);
			}
		},
		async cancel() {
			await it.return(undefined);
		}
	});
}
