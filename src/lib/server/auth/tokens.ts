import { createHash, randomBytes } from 'node:crypto';
import { Op } from 'sequelize';
import { ApiToken, models } from '../models';

export const TOKEN_PREFIX = 'rgl_';

export function sha256hex(text: string): string {
	return createHash('sha256').update(text).digest('hex');
}

/** A fresh random secret (256 bits), shown to the user once; only its SHA-256 is stored. */
export function newSecret(prefix = ''): string {
	return prefix + randomBytes(32).toString('base64url');
}

export async function createApiToken(userId: string, label: string, days: number | null) {
	models();
	const secret = newSecret(TOKEN_PREFIX);
	const row = await ApiToken.create({
		userId,
		label,
		tokenHash: sha256hex(secret),
		prefix: secret.slice(0, TOKEN_PREFIX.length + 6),
		lastUsedAt: null,
		expiresAt: days ? new Date(Date.now() + days * 86_400_000) : null,
		revokedAt: null
	});
	return { token: row, secret };
}

/** The user id behind a bearer token, or null when unknown, revoked or expired. */
export async function userIdForBearer(secret: string): Promise<{ userId: string; tokenId: string } | null> {
	if (!secret.startsWith(TOKEN_PREFIX) || secret.length > 100) return null;
	models();
	const row = await ApiToken.findOne({
		where: {
			tokenHash: sha256hex(secret),
			revokedAt: null,
			[Op.or]: [{ expiresAt: null }, { expiresAt: { [Op.gt]: new Date() } }]
		}
	});
	if (!row) return null;
	if (!row.lastUsedAt || Date.now() - new Date(row.lastUsedAt).getTime() > 60_000) {
		await ApiToken.update({ lastUsedAt: new Date() }, { where: { id: row.id } });
	}
	return { userId: row.userId, tokenId: row.id };
}
