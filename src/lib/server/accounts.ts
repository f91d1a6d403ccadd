import { z } from 'zod';
import { Op, QueryTypes } from 'sequelize';
import { models, User, Lab, EmailToken, ApiToken } from './models';
import { appendTrail, actorOf } from './trail';
import { enqueueMail } from './outbox';
import { inviteMail, resetMail } from './mail-templates';
import { facilityName } from './facility';
import { hashPassword, passwordProblem, verifyPassword } from './auth/password';
import { newSecret, sha256hex, createApiToken } from './auth/tokens';
import { lucia } from './auth/lucia';
import { ApiProblem } from './api';
import { config } from './config';
import { ROLES, ROLE_LABELS, type Role, type SessionUser } from './auth/types';
import { plainText, emailField, uuidField } from './validation';

export const INVITE_HOURS = 24;
export const RESET_HOURS = 1;

export { actorOf };

export const roleField = z.enum(ROLES, { error: `Role must be one of: ${ROLES.join(', ')}.` });

export const inviteSchema = z
	.object({
		email: emailField,
		name: plainText('Name', 1, 120),
		role: roleField,
		labId: uuidField('Lab').nullable().optional()
	})
	.strict()
	.superRefine((v, ctx) => {
		if (v.role === 'lab_member' && !v.labId) ctx.addIssue({ code: 'custom', path: ['labId'], message: 'A lab member belongs to one lab: choose it.' });
		if (v.role !== 'lab_member' && v.labId) ctx.addIssue({ code: 'custom', path: ['labId'], message: 'Only lab members belong to a lab.' });
	});

export const userPatchSchema = z
	.object({
		role: roleField.optional(),
		labId: uuidField('Lab').nullable().optional(),
		active: z.boolean({ error: 'active must be true or false.' }).optional(),
		name: plainText('Name', 1, 120).optional()
	})
	.strict()
	.refine((v) => Object.keys(v).length > 0, 'Nothing to change: give role, labId, active or name.');

export const labSchema = z
	.object({
		name: plainText('Lab name', 2, 120),
		shortName: plainText('Short name', 1, 40).refine((s) => /^[A-Za-z0-9][A-Za-z0-9 .-]*$/.test(s), 'Short name uses letters, digits, spaces, dots and dashes.'),
		institution: plainText('Institution', 0, 200).optional().default(''),
		contactEmail: z.union([emailField, z.literal('')]).optional().default('')
	})
	.strict();

export const passwordSetSchema = z
	.object({
		password: z.string({ error: 'Password must be text.' }).max(1024, 'That password is too long.'),
		confirm: z.string({ error: 'Repeat the password.' }).max(1024)
	})
	.refine((v) => v.password === v.confirm, { path: ['confirm'], message: 'The two passwords differ.' });

async function labExists(labId: string, t: import('sequelize').Transaction) {
	const lab = await Lab.findByPk(labId, { transaction: t });
	if (!lab || !lab.active) throw new ApiProblem(422, 'invalid_input', 'No such active lab.', { labId: 'No such active lab.' });
	return lab;
}

export function publicUser(u: User) {
	return {
		id: u.id,
		email: u.email,
		name: u.name,
		role: u.role,
		roleLabel: ROLE_LABELS[u.role],
		labId: u.labId,
		labName: u.lab?.name ?? null,
		active: u.active,
		invited: !u.passwordHash,
		deactivatedAt: u.deactivatedAt,
		createdAt: u.createdAt
	};
}

/** Creates the account and queues the invitation in one transaction. */
export async function inviteUser(actor: SessionUser, input: z.infer<typeof inviteSchema>) {
	const sequelize = models();
	return sequelize.transaction(async (t) => {
		const taken = await User.findOne({ where: { email: input.email }, transaction: t });
		if (taken) throw new ApiProblem(409, 'conflict', 'An account with this e-mail address exists already.', { email: 'An account with this e-mail address exists already.' });
		if (input.labId) await labExists(input.labId, t);
		const user = await User.create(
			{ email: input.email, name: input.name, role: input.role, labId: input.labId ?? null, passwordHash: null, deactivatedAt: null },
			{ transaction: t }
		);
		const secret = newSecret();
		await EmailToken.create(
			{ userId: user.id, purpose: 'invite', tokenHash: sha256hex(secret), expiresAt: new Date(Date.now() + INVITE_HOURS * 3600_000), usedAt: null, createdBy: actor.id },
			{ transaction: t }
		);
		const mail = inviteMail(input.name, ROLE_LABELS[input.role], secret, actor.name, await facilityName(sequelize, t));
		await enqueueMail(t, { to: input.email, ...mail, kind: 'invite' });
		await appendTrail(sequelize, t, {
			actor: actorOf(actor), action: 'user.invited', subjectType: 'user', subjectId: user.id,
			after: { email: user.email, name: user.name, role: user.role, labId: user.labId }
		});
		return user;
	});
}

export const firstAdminSchema = z.object({ email: emailField, name: plainText('Name', 1, 120) }).strict();

/**
 * The first administrator of a database that has none (a new production install, where the demo's
 * accounts are not made): an invitation as an invited account gets it, queued as mail and answered
 * so the command line can print its link. Refused once any administrator exists (they invite the
 * rest from the accounts page). The trail names the command line as the actor.
 */
export async function createFirstAdmin(input: z.infer<typeof firstAdminSchema>): Promise<{ user: User; link: string }> {
	const sequelize = models();
	return sequelize.transaction(async (t) => {
		// two commands at once: one waits for the other, then sees its administrator
		await sequelize.query(`SELECT pg_advisory_xact_lock(hashtext('regolog.first-admin'))`, { transaction: t });
		const admins = await User.count({ where: { role: 'admin' }, transaction: t });
		if (admins > 0) throw new ApiProblem(409, 'conflict', 'An administrator exists already: invite further accounts from the accounts page.');
		const taken = await User.findOne({ where: { email: input.email }, transaction: t });
		if (taken) throw new ApiProblem(409, 'conflict', 'An account with this e-mail address exists already.', { email: 'An account with this e-mail address exists already.' });
		const user = await User.create({ email: input.email, name: input.name, role: 'admin', labId: null, passwordHash: null, deactivatedAt: null }, { transaction: t });
		const secret = newSecret();
		await EmailToken.create(
			{ userId: user.id, purpose: 'invite', tokenHash: sha256hex(secret), expiresAt: new Date(Date.now() + INVITE_HOURS * 3600_000), usedAt: null, createdBy: null },
			{ transaction: t }
		);
		const facility = await facilityName(sequelize, t);
		const mail = inviteMail(input.name, ROLE_LABELS.admin, secret, `The ${facility} installation`, facility);
		await enqueueMail(t, { to: input.email, ...mail, kind: 'invite' });
		await appendTrail(sequelize, t, {
			actor: { id: null, label: 'command line (first administrator)' }, action: 'user.invited', subjectType: 'user', subjectId: user.id,
			after: { email: user.email, name: user.name, role: user.role, labId: null }
		});
		return { user, link: `${config.origin}/invite/${secret}` };
	});
}

/** Queues a reset link when an active account exists; the caller answers the same either way. */
export async function requestReset(email: string): Promise<void> {
	const sequelize = models();
	await sequelize.transaction(async (t) => {
		const user = await User.findOne({ where: { email, active: true }, transaction: t });
		if (!user || !user.passwordHash) return;
		const recent = await EmailToken.count({
			where: { userId: user.id, purpose: 'reset', usedAt: null, createdAt: { [Op.gt]: new Date(Date.now() - 60_000) } },
			transaction: t
		});
		if (recent > 0) return; // one link a minute is enough
		const secret = newSecret();
		await EmailToken.create(
			{ userId: user.id, purpose: 'reset', tokenHash: sha256hex(secret), expiresAt: new Date(Date.now() + RESET_HOURS * 3600_000), usedAt: null, createdBy: null },
			{ transaction: t }
		);
		await enqueueMail(t, { to: user.email, ...resetMail(user.name, secret, await facilityName(sequelize, t)), kind: 'reset' });
		await appendTrail(sequelize, t, { actor: { id: user.id, label: user.email }, action: 'user.reset_requested', subjectType: 'user', subjectId: user.id });
	});
}

/** The account a still-valid single-use link belongs to, or null. */
export async function tokenOwner(purpose: 'invite' | 'reset', secret: string) {
	models();
	if (!secret || secret.length > 100) return null;
	const tok = await EmailToken.findOne({ where: { tokenHash: sha256hex(secret), purpose } });
	if (!tok || tok.usedAt || new Date(tok.expiresAt) <= new Date()) return null;
	const user = await User.findByPk(tok.userId);
	if (!user || !user.active) return null;
	return { token: tok, user };
}

/** Uses a link once: sets the password, ends every other session of the account. */
export async function redeemToken(purpose: 'invite' | 'reset', secret: string, password: string) {
	const sequelize = models();
	return sequelize.transaction(async (t) => {
		const tok = await EmailToken.findOne({ where: { tokenHash: sha256hex(secret), purpose }, transaction: t, lock: t.LOCK.UPDATE });
		if (!tok || tok.usedAt || new Date(tok.expiresAt) <= new Date()) {
			throw new ApiProblem(410, 'token_invalid', 'This link has been used or has expired. Ask for a new one.');
		}
		const user = await User.findByPk(tok.userId, { transaction: t, lock: t.LOCK.UPDATE });
		if (!user || !user.active) throw new ApiProblem(410, 'token_invalid', 'This link has been used or has expired. Ask for a new one.');
		const problem = passwordProblem(password, [user.email, user.email.split('@')[0], user.name]);
		if (problem) throw new ApiProblem(422, 'invalid_input', problem, { password: problem });
		await user.update({ passwordHash: await hashPassword(password) }, { transaction: t });
		await tok.update({ usedAt: new Date() }, { transaction: t });
		await sequelize.query('DELETE FROM sessions WHERE user_id = :id', { replacements: { id: user.id }, transaction: t });
		await appendTrail(sequelize, t, {
			actor: { id: user.id, label: user.email },
			action: purpose === 'invite' ? 'user.invite_accepted' : 'user.password_reset',
			subjectType: 'user', subjectId: user.id
		});
		return user;
	});
}

export async function changePassword(actor: SessionUser, current: string, next: string, keepSessionId: string | null) {
	const sequelize = models();
	return sequelize.transaction(async (t) => {
		const user = await User.findByPk(actor.id, { transaction: t, lock: t.LOCK.UPDATE });
		if (!user || !(await verifyPassword(user.passwordHash, current))) {
			throw new ApiProblem(422, 'invalid_input', 'The current password is not right.', { current: 'The current password is not right.' });
		}
		const problem = passwordProblem(next, [user.email, user.email.split('@')[0], user.name]);
		if (problem) throw new ApiProblem(422, 'invalid_input', problem, { password: problem });
		await user.update({ passwordHash: await hashPassword(next) }, { transaction: t });
		await sequelize.query('DELETE FROM sessions WHERE user_id = :id AND id <> :keep', { replacements: { id: user.id, keep: keepSessionId ?? '' }, transaction: t });
		await appendTrail(sequelize, t, { actor: actorOf(actor), action: 'user.password_changed', subjectType: 'user', subjectId: user.id });
	});
}

/** Role, lab, name and activation changes by an admin; deactivation ends sessions and tokens. */
export async function updateUser(actor: SessionUser, userId: string, patch: z.infer<typeof userPatchSchema>) {
	const sequelize = models();
	return sequelize.transaction(async (t) => {
		const user = await User.findByPk(userId, { transaction: t, lock: t.LOCK.UPDATE });
		if (!user) throw new ApiProblem(404, 'not_found', 'No such user.');
		const before = { role: user.role, labId: user.labId, active: user.active, name: user.name };
		const role: Role = patch.role ?? user.role;
		let labId = patch.labId !== undefined ? patch.labId : user.labId;
		if (role !== 'lab_member') labId = patch.labId ? labId : null;
		if (role === 'lab_member' && !labId) throw new ApiProblem(422, 'invalid_input', 'A lab member belongs to one lab: choose it.', { labId: 'A lab member belongs to one lab: choose it.' });
		if (role !== 'lab_member' && labId) throw new ApiProblem(422, 'invalid_input', 'Only lab members belong to a lab.', { labId: 'Only lab members belong to a lab.' });
		if (labId && labId !== user.labId) await labExists(labId, t);
		if (user.id === actor.id && (patch.active === false || (patch.role && patch.role !== 'admin'))) {
			throw new ApiProblem(409, 'conflict', 'You cannot deactivate yourself or give up your own admin role; ask another admin.');
		}
		const active = patch.active ?? user.active;
		await user.update(
			{ role, labId, active, name: patch.name ?? user.name, deactivatedAt: active ? null : user.deactivatedAt ?? new Date() },
			{ transaction: t }
		);
		if (!active || role !== before.role || labId !== before.labId) {
			// A changed role or lab takes effect at once: open sessions are ended.
			await sequelize.query('DELETE FROM sessions WHERE user_id = :id', { replacements: { id: user.id }, transaction: t });
		}
		if (!active) {
			await ApiToken.update({ revokedAt: new Date() }, { where: { userId: user.id, revokedAt: null }, transaction: t });
		}
		const after = { role, labId, active, name: user.name };
		await appendTrail(sequelize, t, {
			actor: actorOf(actor), action: !active && before.active ? 'user.deactivated' : active && !before.active ? 'user.reactivated' : 'user.updated',
			subjectType: 'user', subjectId: user.id, before, after
		});
		return User.findByPk(user.id, { include: ['lab'], transaction: t });
	});
}

export async function createLab(actor: SessionUser, input: z.infer<typeof labSchema>) {
	const sequelize = models();
	return sequelize.transaction(async (t) => {
		const clash = await sequelize.query('SELECT 1 FROM labs WHERE lower(name) = lower(:n) OR lower(short_name) = lower(:s)', {
			type: QueryTypes.SELECT, replacements: { n: input.name, s: input.shortName }, transaction: t
		});
		if (clash.length) throw new ApiProblem(409, 'conflict', 'A lab with this name or short name exists already.', { name: 'A lab with this name or short name exists already.' });
		const lab = await Lab.create(input, { transaction: t });
		await appendTrail(sequelize, t, { actor: actorOf(actor), action: 'lab.created', subjectType: 'lab', subjectId: lab.id, after: input });
		return lab;
	});
}

export const tokenCreateSchema = z
	.object({
		label: plainText('Label', 1, 80),
		days: z.number({ error: 'days must be a number.' }).int('days must be a whole number.').min(1, 'days is at least 1.').max(366, 'days is at most 366.').nullable().optional()
	})
	.strict();

export async function issueToken(actor: SessionUser, input: z.infer<typeof tokenCreateSchema>) {
	const sequelize = models();
	const active = await ApiToken.count({ where: { userId: actor.id, revokedAt: null } });
	if (active >= 20) throw new ApiProblem(409, 'conflict', 'You have 20 active tokens; revoke one first.');
	const r = await createApiToken(actor.id, input.label, input.days ?? 90);
	await sequelize.transaction((t) =>
		appendTrail(sequelize, t, { actor: actorOf(actor), action: 'token.created', subjectType: 'api_token', subjectId: r.token.id, after: { label: input.label, prefix: r.token.prefix, expiresAt: r.token.expiresAt } })
	);
	return r;
}

export async function revokeToken(actor: SessionUser, tokenId: string) {
	const sequelize = models();
	return sequelize.transaction(async (t) => {
		// Only one's own tokens; another user's id answers 404 like an unknown one.
		const tok = await ApiToken.findOne({ where: { id: tokenId, userId: actor.id }, transaction: t, lock: t.LOCK.UPDATE });
		if (!tok) throw new ApiProblem(404, 'not_found', 'No such token.');
		if (tok.revokedAt) return tok;
		await tok.update({ revokedAt: new Date() }, { transaction: t });
		await appendTrail(sequelize, t, { actor: actorOf(actor), action: 'token.revoked', subjectType: 'api_token', subjectId: tok.id });
		return tok;
	});
}

export async function listTokens(userId: string) {
	models();
	const rows = await ApiToken.findAll({ where: { userId }, order: [['createdAt', 'DESC']] });
	return rows.map((r) => ({ id: r.id, label: r.label, prefix: r.prefix, createdAt: r.createdAt, lastUsedAt: r.lastUsedAt, expiresAt: r.expiresAt, revokedAt: r.revokedAt }));
}

export { lucia };
