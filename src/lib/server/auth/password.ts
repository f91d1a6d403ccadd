import { hash, verify } from '@node-rs/argon2';
import { dictionary } from '@zxcvbn-ts/language-common';

/**
 * argon2id at the OWASP Password Storage Cheat Sheet minimum: m = 19 MiB (19456 KiB), t = 2, p = 1.
 */
export const ARGON2_PARAMS = { memoryCost: 19456, timeCost: 2, parallelism: 1, outputLen: 32 } as const;

export const PASSWORD_MIN = 12;
export const PASSWORD_MAX = 128;

let common: Set<string> | null = null;
function commonPasswords(): Set<string> {
	if (!common) common = new Set((dictionary['passwords-common'] as string[]).map((p) => p.toLowerCase()));
	return common;
}

/**
 * Password rules after NIST SP 800-63B §5.1.1.2: a minimum length (12 here), at least 64 allowed,
 * every printable character and space allowed, no composition rules, and refusal of values found
 * on a list of commonly used passwords or made of words specific to the service or the user.
 * Returns a message saying what is wrong, or null when acceptable.
 */
export function passwordProblem(password: string, context: string[] = []): string | null {
	const length = [...password.normalize('NFC')].length;
	if (length < PASSWORD_MIN) return `Use at least ${PASSWORD_MIN} characters (this one has ${length}).`;
	if (length > PASSWORD_MAX) return `Use at most ${PASSWORD_MAX} characters.`;
	const lower = password.toLowerCase();
	if (commonPasswords().has(lower)) return 'This password is on a list of commonly used passwords; choose another.';
	if (/^(.)\1+$/.test(password)) return 'A password of one repeated character is too easy to guess.';
	const words = ['regolog', 'brightwater', ...context.map((c) => c.toLowerCase()).filter((c) => c.length >= 4)];
	for (const w of words) {
		if (lower === w || lower.replace(/[^a-z0-9]/g, '') === w.replace(/[^a-z0-9]/g, '')) {
			return 'A password that is only your name, e-mail or the service name is too easy to guess.';
		}
	}
	return null;
}

export function hashPassword(password: string): Promise<string> {
	return hash(password.normalize('NFC'), ARGON2_PARAMS);
}

export async function verifyPassword(stored: string | null, password: string): Promise<boolean> {
	if (!stored) return false;
	try {
		return await verify(stored, password.normalize('NFC'));
	} catch {
		return false;
	}
}

/** A valid hash to verify against when the account is unknown, so both paths cost the same. */
let decoy: Promise<string> | null = null;
export function decoyHash(): Promise<string> {
	if (!decoy) decoy = hash('decoy-password-for-timing', ARGON2_PARAMS);
	return decoy;
}
