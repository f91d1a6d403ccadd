import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { allocatableUg } from '../../domain/budget';
/**
 * What a grant from a collection may give: the collection's allocatable mass (DESIGN §3.4:
 * pristine − reserve − earmarked − expanded uncertainty) less what earlier grants have promised
 * but not yet set aside. Call inside a transaction that holds the collection's row lock.
 */
export async function grantableUg(sq: Sequelize, t: Transaction, collectionId: string) {
	const [c] = await sq.query<{ reserve_fraction: string; pristine_ug: number; earmarked_ug: number; u2: number; outstanding_ug: number }>(
		`SELECT c.reserve_fraction,
		   (SELECT coalesce(sum(mass_ug), 0)::bigint FROM items WHERE collection_id = c.id AND state IN ('stored', 'earmarked') AND holder_lab_id IS NULL) AS pristine_ug,
		   (SELECT coalesce(sum(mass_ug), 0)::bigint FROM items WHERE collection_id = c.id AND state = 'earmarked') AS earmarked_ug,
		   (SELECT coalesce(sum(mass_u_ug ^ 2), 0) FROM items WHERE collection_id = c.id AND state IN ('stored', 'earmarked') AND holder_lab_id IS NULL) AS u2,
		   (SELECT coalesce(sum(greatest(r.granted_ug - coalesce((SELECT sum(ai.mass_ug) FROM allocation_items ai WHERE ai.request_id = r.id), 0), 0)), 0)::bigint
		      FROM allocation_requests r WHERE r.collection_id = c.id AND r.state = 'granted') AS outstanding_ug
		 FROM collections c WHERE c.id = :id`,
		{ type: QueryTypes.SELECT, replacements: { id: collectionId }, transaction: t }
	);
	const fraction = Number(c.reserve_fraction);
	const expandedUg = 2 * Math.sqrt(Number(c.u2));
	const allocatable = allocatableUg({ pristineUg: Number(c.pristine_ug), fraction, earmarkedUg: Number(c.earmarked_ug), expandedUg });
	const withoutReserve = Math.max(0, Number(c.pristine_ug) - Number(c.earmarked_ug) - Math.ceil(expandedUg) - Number(c.outstanding_ug));
	return { grantableUg: Math.max(0, allocatable - Number(c.outstanding_ug)), beyondReserveUg: withoutReserve, outstandingUg: Number(c.outstanding_ug) };
}

