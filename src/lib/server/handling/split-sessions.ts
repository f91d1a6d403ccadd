import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { appendTrail } from '../trail';
import { trailActor, type Who } from '../registry/common';

// The handling session named for a split: checked when the split is recorded, or attached later
// to a split recorded without one.

export const attachInput = z.strictObject({ sessionId: z.string({ error: 'must be a handling session id' }).uuid('must be a handling session id') });

/** A session may be named for a split when it lists the split's parent item. */
async function assertSessionFits(sq: Sequelize, t: Transaction, sessionId: string, parentId: string, parentCode: string, field: string) {
	const [s] = await sq.query<{ id: string; has: boolean }>(
		'SELECT s.id, EXISTS (SELECT 1 FROM handling_session_items x WHERE x.session_id = s.id AND x.item_id = :p) AS has FROM handling_sessions s WHERE s.id = :s',
		{ type: QueryTypes.SELECT, replacements: { s: sessionId, p: parentId }, transaction: t }
	);
	if (!s) throw new ApiProblem(422, 'unknown_session', `${field}: there is no handling session ${sessionId}.`, { [field]: 'no such handling session' });
	if (!s.has) throw new ApiProblem(422, 'session_without_item', `${field}: that handling session does not list ${parentCode}, the item that was split.`, { [field]: `does not list ${parentCode}` });
}

/** Checks a session named when a split is recorded (used inside the split's transaction). */
export async function checkSplitSession(sq: Sequelize, t: Transaction, sessionId: string, parentId: string, parentCode: string) {
	if (!/^[0-9a-f-]{36}$/i.test(sessionId)) throw new ApiProblem(422, 'invalid_input', 'handlingSessionId: must be a handling session id.', { handlingSessionId: 'must be a handling session id' });
	await assertSessionFits(sq, t, sessionId, parentId, parentCode, 'handlingSessionId');
}

/** Attaches a handling session to a split that was recorded without one: once, and on the trail. */
export async function attachSession(sq: Sequelize, who: Who, splitId: string, input: z.infer<typeof attachInput>) {
	return sq.transaction(async (t) => {
		const [sp] = await sq.query<{ id: string; parent_id: string; parent_code: string; handling_session_id: string | null }>(
			'SELECT sp.id, sp.parent_id, p.code AS parent_code, sp.handling_session_id FROM splits sp JOIN items p ON p.id = sp.parent_id WHERE sp.id = :id FOR UPDATE OF sp',
			{ type: QueryTypes.SELECT, replacements: { id: splitId }, transaction: t }
		);
		if (!sp) throw new ApiProblem(404, 'not_found', 'No such split.');
		if (sp.handling_session_id) throw new ApiProblem(409, 'already_attached', `This split of ${sp.parent_code} already names a handling session (${sp.handling_session_id}); it cannot be changed.`);
		await assertSessionFits(sq, t, input.sessionId, sp.parent_id, sp.parent_code, 'sessionId');
		await sq.query('UPDATE splits SET handling_session_id = :s WHERE id = :id', { transaction: t, replacements: { s: input.sessionId, id: sp.id } });
		const after = { splitId: sp.id, parentCode: sp.parent_code, handlingSessionId: input.sessionId };
		await appendTrail(sq, t, { actor: trailActor(who), action: 'split.session_attached', subjectType: 'split', subjectId: sp.id, before: { handlingSessionId: null }, after });
		return after;
	});
}
