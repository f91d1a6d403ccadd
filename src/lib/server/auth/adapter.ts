import type { Adapter, DatabaseSession, DatabaseUser } from 'lucia';
import { Op } from 'sequelize';
import { models, Session, User } from '../models';

function toSession(s: Session): DatabaseSession {
	return { id: s.id, userId: s.userId, expiresAt: new Date(s.expiresAt), attributes: {} };
}

/** lucia v3 adapter over Sequelize: sessions live in the "sessions" table of PostgreSQL. */
export class SequelizeAdapter implements Adapter {
	constructor() {
		models();
	}

	async getSessionAndUser(sessionId: string): Promise<[DatabaseSession | null, DatabaseUser | null]> {
		const s = await Session.findByPk(sessionId);
		if (!s) return [null, null];
		const u = await User.findByPk(s.userId, { include: ['lab'] });
		if (!u) return [toSession(s), null];
		return [
			toSession(s),
			{
				id: u.id,
				attributes: {
					email: u.email,
					name: u.name,
					role: u.role,
					labId: u.labId,
					labName: u.lab?.name ?? null,
					active: u.active
				}
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
