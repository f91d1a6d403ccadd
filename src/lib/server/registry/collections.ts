import { z } from 'zod';
import { QueryTypes, type Sequelize } from 'sequelize';
import { allocatableUg, reserveUg } from '../../domain/budget';
import { ApiProblem } from '../api';
import { appendTrail } from '../trail';
import { shortText, trailActor, type Who } from './common';

interface CollectionRow {
	id: string;
	prefix: string;
	name: string;
	kind: string;
	description: string;
	allowed_atmospheres: string[];
	allowed_contact_materials: string[];
	max_air_exposure_min: number | null;
	reserve_fraction: string;
	loss_tolerance_ug: number | null;
	loss_tolerance_fraction: string | null;
	registered_ug: number;
	specimens: number;
	aliquots: number;
	stored_ug: number;
	earmarked_ug: number;
	out_ug: number;
	consumed_ug: number;
	lost_ug: number;
	losses_ug: number;
	used_ug: number;
	pristine_ug: number;
	pristine_u2: number;
}

export const COLLECTION_KINDS = { sample_return: 'Sample return', meteorite: 'Meteorite', laboratory_analogue: 'Laboratory analogue' } as const;

/**
 * Each collection with its rules and where its mass went. Mass is conserved: registered =
 * stored + earmarked + out with labs + consumed + lost + split losses, exactly.
 * Pristine here is material that has never left the facility (stored or earmarked there).
 */
export async function collectionSummaries(sq: Sequelize) {
	const rows = await sq.query<CollectionRow>(
		`SELECT c.id, c.prefix, c.name, c.kind, c.description, c.allowed_atmospheres, c.allowed_contact_materials, c.max_air_exposure_min,
		        c.reserve_fraction, c.loss_tolerance_ug, c.loss_tolerance_fraction,
		        coalesce(sum(i.initial_mass_ug) FILTER (WHERE i.parent_id IS NULL), 0)::bigint AS registered_ug,
		        count(i.id) FILTER (WHERE i.parent_id IS NULL)::int AS specimens,
		        count(i.id) FILTER (WHERE i.kind = 'aliquot')::int AS aliquots,
		        coalesce(sum(i.mass_ug) FILTER (WHERE i.state = 'stored'), 0)::bigint AS stored_ug,
		        coalesce(sum(i.mass_ug) FILTER (WHERE i.state = 'earmarked'), 0)::bigint AS earmarked_ug,
		        coalesce(sum(i.mass_ug) FILTER (WHERE i.state IN ('in_transit', 'on_loan')), 0)::bigint AS out_ug,
		        coalesce(sum(i.mass_ug) FILTER (WHERE i.state = 'consumed'), 0)::bigint AS consumed_ug,
		        coalesce(sum(i.mass_ug) FILTER (WHERE i.state = 'lost'), 0)::bigint AS lost_ug,
		        (SELECT coalesce(sum(s.loss_ug), 0)::bigint FROM splits s JOIN items p ON p.id = s.parent_id WHERE p.collection_id = c.id) AS losses_ug,
		        (SELECT coalesce(sum(u.consumed_ug + u.lost_ug + u.gap_ug), 0)::bigint FROM usage_reports u JOIN items ui ON ui.id = u.item_id WHERE ui.collection_id = c.id) AS used_ug,
		        coalesce(sum(i.mass_ug) FILTER (WHERE i.state IN ('stored', 'earmarked') AND i.holder_lab_id IS NULL), 0)::bigint AS pristine_ug,
		        coalesce(sum(i.mass_u_ug ^ 2) FILTER (WHERE i.state IN ('stored', 'earmarked') AND i.holder_lab_id IS NULL), 0) AS pristine_u2
		 FROM collections c LEFT JOIN items i ON i.collection_id = c.id
		 GROUP BY c.id ORDER BY c.prefix`,
		{ type: QueryTypes.SELECT }
	);
	return rows.map((r) => {
		const fraction = Number(r.reserve_fraction);
		const expandedUg = 2 * Math.sqrt(Number(r.pristine_u2));
		return {
			prefix: r.prefix,
			name: r.name,
			kind: r.kind,
			kindLabel: COLLECTION_KINDS[r.kind as keyof typeof COLLECTION_KINDS] ?? r.kind,
			description: r.description,
			rules: {
				allowedAtmospheres: r.allowed_atmospheres,
				allowedContactMaterials: r.allowed_contact_materials,
				maxAirExposureMin: r.max_air_exposure_min,
				reserveFraction: fraction,
				lossToleranceUg: r.loss_tolerance_ug,
				lossToleranceFraction: r.loss_tolerance_fraction === null ? null : Number(r.loss_tolerance_fraction)
			},
			specimens: r.specimens,
			aliquots: r.aliquots,
			registeredUg: r.registered_ug,
			pristineUg: r.pristine_ug,
			pristineExpandedUg: expandedUg,
			reserveUg: reserveUg(r.pristine_ug, fraction),
			earmarkedUg: r.earmarked_ug,
			allocatableUg: allocatableUg({ pristineUg: r.pristine_ug, fraction, earmarkedUg: r.earmarked_ug, expandedUg }),
			whereMassWent: {
				storedUg: r.stored_ug,
				earmarkedUg: r.earmarked_ug,
				outUg: r.out_ug,
				consumedUg: r.consumed_ug,
				lostUg: r.lost_ug,
				splitLossesUg: r.losses_ug,
				usedUg: r.used_ug
			},
			balanced: r.registered_ug === r.stored_ug + r.earmarked_ug + r.out_ug + r.consumed_ug + r.lost_ug + r.losses_ug + r.used_ug
		};
	});
}
export type CollectionSummary = Awaited<ReturnType<typeof collectionSummaries>>[number];

const label = shortText(60).min(1, 'must not be empty');
export const rulesInput = z
	.strictObject({
		allowedAtmospheres: z.array(label, { error: 'must be a list of atmosphere names' }).max(20).optional(),
		allowedContactMaterials: z.array(label, { error: 'must be a list of materials' }).max(40).optional(),
		maxAirExposureMin: z.number({ error: 'must be whole minutes or null' }).int('must be whole minutes').min(0, 'cannot be negative').max(100000).nullable().optional(),
		reserveFraction: z.number({ error: 'must be a fraction from 0 to 1' }).min(0, 'must be from 0 to 1').max(1, 'must be from 0 to 1').multipleOf(0.00001, 'at most 5 decimals').optional(),
		lossToleranceUg: z.number({ error: 'must be whole µg' }).int('must be whole µg').min(0, 'cannot be negative').max(Number.MAX_SAFE_INTEGER).optional(),
		lossToleranceFraction: z.number({ error: 'must be a fraction from 0 to 1' }).min(0, 'must be from 0 to 1').max(1, 'must be from 0 to 1').optional()
	})
	.refine((v) => v.lossToleranceUg === undefined || v.lossToleranceFraction === undefined, {
		message: 'give the loss tolerance either in µg or as a fraction, not both',
		path: ['lossToleranceUg']
	});

/** Changes a collection's handling rules (admins), with the old and new rules on the trail. */
export async function updateRules(sq: Sequelize, who: Who, prefix: string, input: z.infer<typeof rulesInput>) {
	return sq.transaction(async (t) => {
		const [old] = await sq.query<CollectionRow>('SELECT * FROM collections WHERE prefix = :prefix FOR UPDATE', {
			type: QueryTypes.SELECT, replacements: { prefix: prefix.toUpperCase() }, transaction: t
		});
		if (!old) throw new ApiProblem(404, 'not_found', `No collection ${prefix}.`);
		const before = {
			allowedAtmospheres: old.allowed_atmospheres, allowedContactMaterials: old.allowed_contact_materials, maxAirExposureMin: old.max_air_exposure_min,
			reserveFraction: Number(old.reserve_fraction), lossToleranceUg: old.loss_tolerance_ug,
			lossToleranceFraction: old.loss_tolerance_fraction === null ? null : Number(old.loss_tolerance_fraction)
		};
		const after = { ...before, ...input };
		if (input.lossToleranceUg !== undefined) after.lossToleranceFraction = null;
		if (input.lossToleranceFraction !== undefined) after.lossToleranceUg = null;
		await sq.query(
			`UPDATE collections SET allowed_atmospheres = CAST(:atm AS text[]), allowed_contact_materials = CAST(:mat AS text[]), max_air_exposure_min = :air,
			 reserve_fraction = :reserve, loss_tolerance_ug = :tolUg, loss_tolerance_fraction = :tolFr, updated_at = now() WHERE id = :id`,
			{
				transaction: t,
				replacements: {
					id: old.id, atm: `{${after.allowedAtmospheres.map((s) => JSON.stringify(s)).join(',')}}`, mat: `{${after.allowedContactMaterials.map((s) => JSON.stringify(s)).join(',')}}`,
					air: after.maxAirExposureMin, reserve: after.reserveFraction, tolUg: after.lossToleranceUg, tolFr: after.lossToleranceFraction
				}
			}
		);
		await appendTrail(sq, t, { actor: trailActor(who), action: 'collection.rules_changed', subjectType: 'collection', subjectId: old.id, before, after });
		return after;
	});
}
