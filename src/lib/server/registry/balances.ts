import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { decimalsForReadability, expanded, formatMg, minimumWeight, netUncertainty } from '../../domain/mass';
import { ApiProblem } from '../api';
import { appendTrail } from '../trail';
import { shortText, trailActor, type Who } from './common';

interface BalanceRow {
	id: string;
	name: string;
	model: string;
	location: string;
	readability_ug: string;
	repeatability_ug: string;
	calibration_due: string;
	capacity_ug: string | null;
	active: boolean;
	overdue: boolean;
}

const COLUMNS = `id, name, model, location, readability_ug, repeatability_ug, to_char(calibration_due, 'YYYY-MM-DD') AS calibration_due,
	capacity_ug, active, calibration_due < current_date AS overdue`;

/** A balance with what follows from its d and s: net uncertainty (GUM) and minimum weight (USP <41>). */
export function balanceView(r: BalanceRow) {
	const spec = { d: Number(r.readability_ug), s: Number(r.repeatability_ug) };
	const u = netUncertainty(spec);
	return {
		id: r.id,
		name: r.name,
		model: r.model,
		location: r.location,
		readabilityUg: spec.d,
		repeatabilityUg: spec.s,
		calibrationDue: r.calibration_due,
		/** the maximum load, µg; null when not recorded */
		capacityUg: r.capacity_ug === null ? null : Number(r.capacity_ug),
		active: r.active,
		overdue: r.overdue,
		usable: r.active && !r.overdue,
		netUUg: u,
		netExpandedUg: expanded(u),
		minimumWeightUg: minimumWeight(spec),
		decimals: decimalsForReadability(spec.d)
	};
}
export type BalanceView = ReturnType<typeof balanceView>;

export async function listBalances(sq: Sequelize): Promise<BalanceView[]> {
	const rows = await sq.query<BalanceRow>(`SELECT ${COLUMNS} FROM balances ORDER BY readability_ug, name`, { type: QueryTypes.SELECT });
	return rows.map(balanceView);
}

const uuidText = z.string().uuid('is not a balance id');

/**
 * The balance for a weighing inside a transaction. Refused when unknown, retired, or past its
 * calibration due date (a weighing on an uncalibrated balance is not a measurement we can stand by).
 */
export async function balanceForWeighing(sq: Sequelize, t: Transaction, id: string, field = 'balanceId'): Promise<BalanceView> {
	if (!uuidText.safeParse(id).success) throw new ApiProblem(422, 'invalid_input', `${field}: "${id}" is not a balance id.`, { [field]: 'is not a balance id' });
	const [row] = await sq.query<BalanceRow>(`SELECT ${COLUMNS} FROM balances WHERE id = :id`, { type: QueryTypes.SELECT, replacements: { id }, transaction: t });
	if (!row) throw new ApiProblem(422, 'unknown_balance', `${field}: there is no balance ${id}.`, { [field]: 'no such balance' });
	const b = balanceView(row);
	if (!b.active) throw new ApiProblem(422, 'balance_retired', `Balance ${b.name} is retired; weigh on another balance.`, { [field]: 'balance is retired' });
	if (b.overdue) {
		throw new ApiProblem(422, 'calibration_overdue', `Balance ${b.name} was due for calibration on ${b.calibrationDue}; weighings on it are refused until it is recalibrated.`, {
			[field]: `calibration was due ${b.calibrationDue}`
		});
	}
	return b;
}

const isoDate = z
	.string({ error: 'must be a date YYYY-MM-DD' })
	.regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date YYYY-MM-DD')
	.refine((s) => !Number.isNaN(Date.parse(s + 'T00:00:00Z')) && new Date(s + 'T00:00:00Z').toISOString().startsWith(s), 'is not a calendar date');
const positiveUg = z.number({ error: 'must be a number of µg' }).finite().positive('must be more than 0 µg').max(1e6, 'must be at most 1,000,000 µg');

export const balanceInput = z.strictObject({
	name: shortText(80).min(2, 'must be at least 2 characters'),
	model: shortText(120).optional(),
	location: shortText(120).optional(),
	readabilityUg: positiveUg,
	repeatabilityUg: z.number({ error: 'must be a number of µg' }).finite().min(0, 'cannot be negative').max(1e6, 'must be at most 1,000,000 µg'),
	calibrationDue: isoDate,
	capacityUg: z.number({ error: 'must be a whole number of µg' }).int('must be a whole number of µg').positive('must be more than 0 µg').max(1e12, 'must be at most 1,000,000,000,000 µg (1 t)').nullable().optional(),
	active: z.boolean({ error: 'must be true or false' }).optional()
});
export type BalanceInput = z.infer<typeof balanceInput>;
export const balancePatch = balanceInput.partial();

function uniqueName(e: unknown): never {
	if ((e as { original?: { code?: string } })?.original?.code === '23505') {
		throw new ApiProblem(409, 'duplicate_name', 'A balance with this name exists already.', { name: 'is taken' });
	}
	throw e;
}

export async function createBalance(sq: Sequelize, who: Who, input: BalanceInput): Promise<BalanceView> {
	return sq
		.transaction(async (t) => {
			const [row] = await sq.query<BalanceRow>(
				`INSERT INTO balances (name, model, location, readability_ug, repeatability_ug, calibration_due, capacity_ug, active)
				 VALUES (:name, :model, :location, :d, :s, :due, :capacity, :active) RETURNING ${COLUMNS}`,
				{
					type: QueryTypes.SELECT,
					transaction: t,
					replacements: {
						name: input.name, model: input.model ?? '', location: input.location ?? '', d: input.readabilityUg,
						s: input.repeatabilityUg, due: input.calibrationDue, capacity: input.capacityUg ?? null, active: input.active ?? true
					}
				}
			);
			const view = balanceView(row);
			await appendTrail(sq, t, { actor: trailActor(who), action: 'balance.created', subjectType: 'balance', subjectId: view.id, after: view });
			return view;
		})
		.catch(uniqueName);
}

export async function updateBalance(sq: Sequelize, who: Who, id: string, patch: z.infer<typeof balancePatch>): Promise<BalanceView> {
	if (!uuidText.safeParse(id).success) throw new ApiProblem(404, 'not_found', 'No such balance.');
	return sq
		.transaction(async (t) => {
			const [old] = await sq.query<BalanceRow>(`SELECT ${COLUMNS} FROM balances WHERE id = :id FOR UPDATE`, { type: QueryTypes.SELECT, replacements: { id }, transaction: t });
			if (!old) throw new ApiProblem(404, 'not_found', 'No such balance.');
			const before = balanceView(old);
			const next = { ...before, ...patch };
			const [row] = await sq.query<BalanceRow>(
				`UPDATE balances SET name = :name, model = :model, location = :location, readability_ug = :d, repeatability_ug = :s,
				 calibration_due = :due, capacity_ug = :capacity, active = :active, updated_at = now() WHERE id = :id RETURNING ${COLUMNS}`,
				{
					type: QueryTypes.SELECT,
					transaction: t,
					replacements: {
						id, name: next.name, model: next.model, location: next.location, d: next.readabilityUg, s: next.repeatabilityUg,
						due: next.calibrationDue, capacity: next.capacityUg ?? null, active: next.active
					}
				}
			);
			const after = balanceView(row);
			await appendTrail(sq, t, { actor: trailActor(who), action: 'balance.updated', subjectType: 'balance', subjectId: id, before, after });
			return after;
		})
		.catch(uniqueName);
}

/**
 * Refuses a weighing above the balance's capacity (its maximum load): `loads` are the masses put on
 * it, by the field that gave each (gross, with any tare).
 */
export function checkCapacity(balance: BalanceView, loads: { field: string; ug: number }[]): void {
	if (balance.capacityUg === null) return;
	const over = loads.filter((l) => l.ug > balance.capacityUg!);
	if (!over.length) return;
	const fields = Object.fromEntries(over.map((l) => [l.field, `${formatMg(l.ug)} is above the capacity of ${balance.name} (${formatMg(balance.capacityUg!)})`]));
	throw new ApiProblem(422, 'above_capacity', `${over[0].field}: ${formatMg(over[0].ug)} is above the capacity of ${balance.name}, ${formatMg(balance.capacityUg)}; weigh it on a balance that holds it.`, fields);
}
