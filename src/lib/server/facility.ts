/**
 * The facility's name, from the `facility.name` setting (migration 0001: settings, one JSON value
 * per key). Every page, receipt, label and message that names the facility reads it here.
 */
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { db } from './db';

/** What stands where no name is set. */
export const FACILITY_FALLBACK = 'Curation facility';

/** Reads the name afresh (in the caller's transaction when given). */
export async function facilityName(sq: Sequelize = db(), t?: Transaction): Promise<string> {
	const [row] = await sq.query<{ value: unknown }>(`SELECT value FROM settings WHERE key = 'facility.name'`, { type: QueryTypes.SELECT, transaction: t });
	return typeof row?.value === 'string' && row.value.trim() ? row.value.trim() : FACILITY_FALLBACK;
}

const KEEP_MS = 30_000;
let kept: { name: string; at: number } | null = null;

/**
 * The name for the page layout, read at most every 30 s so a page load costs no extra query;
 * a new name shows within half a minute. Documents and messages use `facilityName()`.
 */
export async function facilityNameForPages(): Promise<string> {
	if (kept && Date.now() - kept.at < KEEP_MS) return kept.name;
	try {
		kept = { name: await facilityName(), at: Date.now() };
		return kept.name;
	} catch {
		// the database is out of reach: the page says so itself; the header need not fail with it
		return kept?.name ?? FACILITY_FALLBACK;
	}
}
