import type { Adapter, DatabaseSession, DatabaseUser } from 'lucia';
import { Op, QueryTypes } from 'sequelize';
import type { Role } from './types';
import { models, Session } from '../models';

function toSession(s: Session): DatabaseSession {
	return { id: s.id, userId: s.userId, expiresAt: new Date(s.expiresAt), attributes: {} };
}

interface SessionUserRow {
	id: string;
	user_id: string;
	expires_at: Date;
	uid: string | null;
	email: string;
	name: string;
	role: Role;
	lab_id: string | null;
	lab_name: string | null;
	active: boolean;
}

/** lucia v3 adapter over Sequelize: sessions live in the "sessions" table of PostgreSQL. */
export class SequelizeAdapter implements Adapter {
	constructor() {
		models();
	}

	/** One round trip per request: the session, its user and the user's lab in one query. */
	async getSessionAndUser(sessionId: string): Promise<[DatabaseSession | null, DatabaseUser | null]> {
		const [row] = await models().query<SessionUserRow>(
			`SELECT s.id, s.user_id, s.expires_at, u.id AS uid, u.email, u.name, u.role, u.lab_id, l.name AS lab_name, u.active
			 FROM sessions s LEFT JOIN users u ON u.id = s.user_id LEFT JOIN labs l ON l.id = u.lab_id
			 WHERE s.id = :id`,
			{ type: QueryTypes.SELECT, replacements: { id: sessionId } }
		);
		if (!row) return [null, null];
		const session: DatabaseSession = { id: row.id, userId: row.user_id, expiresAt: new Date(row.expires_at), attributes: {} };
		if (row.uid === null) return [session, null];
		return [
			session,
			{
				id: row.uid,
				attributes: { email: row.email, name: row.name, role: row.role, labId: row.lab_id, labName: row.lab_name, active: row.active }
			}
		];
	}

	async getUserSessions(userId: string): Promise<DatabaseSession[]> {
		return (await Session.findAll({ where: { userId } })).map(toSession);
	}

	async setSession(session: DatabaseSession): Promise<void> {
		const attrs = session.attributes as { ip?: string; userAgent?: string };
		await Session.create({
			id: session.id,
			userId: String(session.userId),
			expiresAt: session.expiresAt,
			ip: (attrs.ip ?? '').slice(0, 64),
			userAgent: (attrs.userAgent ?? '').slice(0, 300)
		});
	}

	async updateSessionExpiration(sessionId: string, expiresAt: Date): Promise<void> {
		await Session.update({ expiresAt }, { where: { id: sessionId } });
	}

	async deleteSession(sessionId: string): Promise<void> {
		await Session.destroy({ where: { id: sessionId } });
	}

	async deleteUserSessions(userId: string): Promise<void> {
		await Session.destroy({ where: { userId } });
	}

	async deleteExpiredSessions(): Promise<void> {
		await Session.destroy({ where: { expiresAt: { [Op.lte]: new Date() } } });
	}
}
