import { Op, type WhereOptions } from 'sequelize';
import { models, User, Lab } from './models';
import { publicUser } from './accounts';
import { canSeeLab, labFilter } from './auth/scope';
import type { SessionUser } from './auth/types';

/** Users for the admin table: searchable by name or e-mail, sortable by a whitelisted column. */
export async function listUsers(opts: { q?: string; sort?: string; dir?: string } = {}) {
	models();
	const sortable: Record<string, string> = { name: 'name', email: 'email', role: 'role', created: 'createdAt', active: 'active' };
	const col = sortable[opts.sort ?? 'name'] ?? 'name';
	const dir = opts.dir === 'desc' ? 'DESC' : 'ASC';
	const where: WhereOptions = opts.q
		? { [Op.or]: [{ name: { [Op.iLike]: `%${opts.q.replace(/[%_\\]/g, '\\$&')}%` } }, { email: { [Op.iLike]: `%${opts.q.replace(/[%_\\]/g, '\\$&')}%` } }] }
		: {};
	const rows = await User.findAll({ where, include: ['lab'], order: [[col, dir], ['email', 'ASC']], limit: 500 });
	return rows.map(publicUser);
}

export function publicLab(l: Lab, members?: number) {
	return { id: l.id, name: l.name, shortName: l.shortName, institution: l.institution, contactEmail: l.contactEmail, active: l.active, ...(members !== undefined ? { members } : {}) };
}

/** Labs within the user's sight: staff see all, a lab member only their own. */
export async function listLabs(user: SessionUser) {
	models();
	const only = labFilter(user);
	const labs = await Lab.findAll({ where: only ? { id: only } : {}, order: [['name', 'ASC']] });
	const counts = await User.count({ where: { role: 'lab_member', active: true }, group: ['labId'] });
	const byLab = new Map((counts as unknown as { labId: string; count: number }[]).map((c) => [c.labId, Number(c.count)]));
	return labs.map((l) => publicLab(l, byLab.get(l.id) ?? 0));
}

export async function findLab(user: SessionUser, id: string) {
	models();
	const lab = await Lab.findByPk(id);
	if (!lab || !canSeeLab(user, lab.id)) return null;
	return lab;
}
