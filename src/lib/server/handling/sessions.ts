import { z } from 'zod';
import { QueryTypes, type Sequelize } from 'sequelize';
import { ApiProblem } from '../api';
import { canSeeLab } from '../auth/scope';
import { findItem, type Who } from '../registry/common';
import { SESSION_SELECT, sessionView, type SessionRow, type SessionView } from './rows';

/**
 * Handling sessions as they are read: one, a list, and a collection's contact catalogue. Recording
 * a session is in record.ts, exposure reports in exposure.ts, sessions named for splits in
 * split-sessions.ts; their names are exported here too, for code that imports them from this module.
 */
export { sessionInput, recordSession, MAX_SESSION_ITEMS, type SessionRequest } from './record';
export { itemExposure } from './exposure';
export { attachInput, attachSession, checkSplitSession } from './split-sessions';
export type { SessionView } from './rows';

/** Sessions that lab members may see: those with at least one item their lab holds. */
function visibleTo(who: Who, r: SessionRow): boolean {
	return who.role !== 'lab_member' || r.items.some((i) => canSeeLab(who, i.holder));
}

export async function getSession(sq: Sequelize, who: Who, id: string): Promise<SessionView> {
	const [r] = await sq.query<SessionRow>(`${SESSION_SELECT} WHERE s.id = :id`, { type: QueryTypes.SELECT, replacements: { id } });
	if (!r || !visibleTo(who, r)) throw new ApiProblem(404, 'not_found', 'No such handling session.');
	return sessionView(r);
}

export const listQuery = z.strictObject({
	item: z.string().optional(),
	collection: z.string().trim().toUpperCase().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix').optional(),
	limit: z.coerce.number({ error: 'must be a number' }).int('must be a whole number').min(1, 'must be at least 1').max(500, 'must be at most 500').optional()
});

export async function listSessions(sq: Sequelize, who: Who, q: z.infer<typeof listQuery>) {
	const where: string[] = [];
	const replacements: Record<string, unknown> = { limit: q.limit ?? 100 };
	if (q.item) {
		const item = await findItem(sq, who, q.item);
		replacements.item = item.id;
		where.push('EXISTS (SELECT 1 FROM handling_session_items x WHERE x.session_id = s.id AND x.item_id = :item)');
	}
	if (q.collection) {
		replacements.prefix = q.collection;
		where.push('c.prefix = :prefix');
	}
	const rows = await sq.query<SessionRow>(`${SESSION_SELECT} ${where.length ? 'WHERE ' + where.join(' AND ') : ''} ORDER BY s.started_at DESC LIMIT :limit`, {
		type: QueryTypes.SELECT, replacements
	});
	return rows.filter((r) => visibleTo(who, r)).map(sessionView);
}

/** The contact catalogue of a collection, each entry marked allowed or not by the collection's rules. */
export async function catalogue(sq: Sequelize, prefix: string) {
	const rows = await sq.query<{ name: string; kind: string; material: string; allowed: boolean }>(
		`SELECT k.name, k.kind, k.material, EXISTS (SELECT 1 FROM unnest(c.allowed_contact_materials) m WHERE lower(m) = lower(k.material)) AS allowed
		 FROM contact_catalogue k JOIN collections c ON c.id = k.collection_id WHERE c.prefix = :prefix ORDER BY k.kind, k.name`,
		{ type: QueryTypes.SELECT, replacements: { prefix } }
	);
	return rows;
}
