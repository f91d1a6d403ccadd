import { parse } from 'csv-parse/sync';
import { stringify } from 'csv-stringify/sync';
import { QueryTypes, type Sequelize } from 'sequelize';
import { MassInputError, parseMgToUg } from '../../domain/mass';
import { ApiProblem, zodFields } from '../api';
import { appendTrail } from '../trail';
import { listBalances } from './balances';
import { trailActor, type Who } from './common';
import { registerInTransaction, registerInput, type RegisterRequest } from './items';

/** The columns of an inventory import, in template order; the first three are required. */
export const IMPORT_COLUMNS = [
	{ name: 'collection', required: true, help: 'collection prefix, e.g. HLF' },
	{ name: 'mass_mg', required: true, help: 'net mass in mg with a decimal point, at most 3 decimals (whole µg), e.g. 1250.375' },
	{ name: 'description', required: true, help: 'what the specimen is' },
	{ name: 'container', required: false, help: 'container it is kept in' },
	{ name: 'storage_place', required: false, help: 'cabinet, shelf, freezer rack' },
	{ name: 'provenance', required: false, help: 'where it came from' },
	{ name: 'balance', required: false, help: 'name of the balance it was weighed on (must be calibrated)' },
	{ name: 'tare_mg', required: false, help: 'tare of the weighing in mg (needs balance)' },
	{ name: 'reason', required: false, help: 'required when the mass is below the balance minimum weight' }
] as const;

export const MAX_IMPORT_ROWS = 5000;
export const MAX_IMPORT_BYTES = 5_000_000;

export function importTemplate(): string {
	return stringify(
		[
			['HLF', '1520.250', 'Fragment F7, fusion crust on one face', 'PTFE jar', 'Cleanroom 2, cabinet C-4', 'Hollins Ford strewn field, find 7', 'Vessant SM-3 semi-micro', '0', ''],
			['ICE', '0.152', 'Run 14 residue on MgF2 window W-14', 'Window holder', 'Freezer −20 °C, rack V', 'Vacuum chamber VC-2', 'Tamberlow UM-1 ultramicro', '', 'residue mass is inherently small']
		],
		{ header: true, columns: IMPORT_COLUMNS.map((c) => c.name) }
	);
}

export interface ImportRow {
	line: number;
	ok: boolean;
	errors: Record<string, string>;
	input: RegisterRequest | null;
	summary: { collection: string; massUg: number | null; description: string };
}

/** Reads the CSV text (RFC 4180, via csv-parse) into records; a malformed file is one clear 422. */
function records(text: string): Record<string, string>[] {
	if (text.length > MAX_IMPORT_BYTES) throw new ApiProblem(413, 'too_large', `The file is larger than ${MAX_IMPORT_BYTES / 1_000_000} MB; split it into smaller files.`);
	let rows: Record<string, string>[];
	try {
		rows = parse(text, { columns: (h: string[]) => h.map((x) => x.trim().toLowerCase()), bom: true, skip_empty_lines: true, trim: true, relax_column_count: false });
	} catch (e) {
		throw new ApiProblem(422, 'invalid_csv', `The file is not readable CSV: ${(e as Error).message}`);
	}
	if (rows.length === 0) throw new ApiProblem(422, 'empty_file', 'The file has a header but no specimens; add one row per specimen.');
	if (rows.length > MAX_IMPORT_ROWS) throw new ApiProblem(422, 'too_many_rows', `The file has ${rows.length} rows; at most ${MAX_IMPORT_ROWS} can be imported at once.`);
	const known = new Set<string>(IMPORT_COLUMNS.map((c) => c.name));
	const header = Object.keys(rows[0]);
	const unknown = header.filter((h) => !known.has(h));
	const missing = IMPORT_COLUMNS.filter((c) => c.required && !header.includes(c.name)).map((c) => c.name);
	if (unknown.length || missing.length) {
		throw new ApiProblem(
			422,
			'invalid_columns',
			[missing.length ? `missing column${missing.length > 1 ? 's' : ''} ${missing.join(', ')}` : '', unknown.length ? `unknown column${unknown.length > 1 ? 's' : ''} ${unknown.join(', ')}` : '']
				.filter(Boolean)
				.join('; ') + `. The columns are: ${IMPORT_COLUMNS.map((c) => c.name).join(', ')}.`
		);
	}
	return rows;
}

/** Checks every row as the registration would, without writing anything. */
export async function checkImport(sq: Sequelize, text: string): Promise<ImportRow[]> {
	const rows = records(text);
	const balances = new Map((await listBalances(sq)).map((b) => [b.name.toLowerCase(), b]));
	const prefixes = new Set((await sq.query<{ prefix: string }>('SELECT prefix FROM collections', { type: QueryTypes.SELECT })).map((r) => r.prefix));
	return rows.map((r, i) => {
		const errors: Record<string, string> = {};
		const mg = (field: string) => {
			try {
				return r[field] ? parseMgToUg(r[field], field) : undefined;
			} catch (e) {
				if (!(e instanceof MassInputError)) throw e;
				errors[field] = e.message;
				return undefined;
			}
		};
		const massUg = mg('mass_mg');
		const tareUg = mg('tare_mg');
		if (!r.mass_mg) errors.mass_mg = 'mass_mg is empty: enter the net mass in mg';
		const balance = r.balance ? balances.get(r.balance.toLowerCase()) : undefined;
		if (r.balance && !balance) errors.balance = `no balance is named "${r.balance}"`;
		else if (balance && !balance.usable) errors.balance = `${balance.name} ${balance.overdue ? `was due for calibration on ${balance.calibrationDue}` : 'is retired'}`;
		if (r.tare_mg && !r.balance) errors.tare_mg = 'a tare needs the balance of the weighing';
		const collection = (r.collection ?? '').toUpperCase();
		if (collection && /^[A-Z]{2,5}$/.test(collection) && !prefixes.has(collection)) errors.collection = `there is no collection ${collection}`;
		const candidate = {
			collection,
			massUg,
			description: r.description ?? '',
			...(r.container ? { container: r.container } : {}),
			...(r.storage_place ? { storagePlace: r.storage_place } : {}),
			...(r.provenance ? { provenance: r.provenance } : {}),
			...(balance ? { weighing: { balanceId: balance.id, ...(tareUg === undefined ? {} : { tareUg }), ...(r.reason ? { reason: r.reason } : {}) } } : {})
		};
		const parsed = registerInput.safeParse(candidate);
		if (!parsed.success) {
			const names: Record<string, string> = { massUg: 'mass_mg', storagePlace: 'storage_place', 'weighing.tareUg': 'tare_mg', 'weighing.reason': 'reason' };
			for (const [k, v] of Object.entries(zodFields(parsed.error.issues))) errors[names[k] ?? k] ??= v;
		}
		if (balance && massUg !== undefined && massUg < balance.minimumWeightUg && !r.reason) {
			errors.reason = `${r.mass_mg} mg is below the minimum weight of ${balance.name} (${balance.minimumWeightUg} µg, USP <41>): give a reason`;
		}
		const ok = Object.keys(errors).length === 0;
		return {
			line: i + 2,
			ok,
			errors,
			input: ok && parsed.success ? parsed.data : null,
			summary: { collection, massUg: massUg ?? null, description: r.description ?? '' }
		};
	});
}

/**
 * Registers every row in one transaction, all or nothing, reporting progress as it goes.
 * Refused with the per-row errors when any row is wrong.
 */
export async function commitImport(sq: Sequelize, who: Who, text: string, progress: (done: number, total: number) => void = () => {}) {
	const rows = await checkImport(sq, text);
	const bad = rows.filter((r) => !r.ok);
	if (bad.length) {
		throw new ApiProblem(422, 'invalid_rows', `${bad.length} of ${rows.length} rows have errors; nothing was imported. First: line ${bad[0].line}: ${Object.values(bad[0].errors)[0]}`, undefined, {
			rows: bad.map((r) => ({ line: r.line, errors: r.errors }))
		});
	}
	return sq.transaction(async (t) => {
		const codes: string[] = [];
		for (const [i, r] of rows.entries()) {
			codes.push(await registerInTransaction(sq, t, who, r.input!));
			progress(i + 1, rows.length);
		}
		await appendTrail(sq, t, {
			actor: trailActor(who), action: 'items.imported', subjectType: 'import', subjectId: codes[0],
			after: { rows: rows.length, first: codes[0], last: codes[codes.length - 1] }
		});
		return codes;
	});
}
