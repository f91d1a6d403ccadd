import type { Sequelize } from 'sequelize';
import type { S3Client } from '@aws-sdk/client-s3';
import type { Transporter } from 'nodemailer';
import { db } from './db';
import { s3, headBucket } from './storage';
import { mailer } from './mail';
import { config } from './config';

export type PartStatus = 'ok' | string;
export interface Health {
	db: PartStatus;
	storage: PartStatus;
	mail: PartStatus;
}

function withTimeout<T>(p: Promise<T>, ms: number, what: string): Promise<T> {
	return new Promise((resolve, reject) => {
		const t = setTimeout(() => reject(new Error(`${what} did not answer within ${ms} ms`)), ms);
		p.then(
			(v) => { clearTimeout(t); resolve(v); },
			(e) => { clearTimeout(t); reject(e); }
		);
	});
}

function describe(e: unknown): string {
	const err = e as { name?: string; message?: string; code?: string };
	return `unavailable: ${err?.code ?? err?.name ?? 'error'}${err?.message ? ` (${err.message})` : ''}`;
}

/** Checks each backing service for real: a query, a bucket head, an SMTP handshake. */
export async function checkHealth(
	deps: { sequelize?: Sequelize; s3?: S3Client; bucket?: string; mail?: Transporter } = {}
): Promise<{ ok: boolean; parts: Health }> {
	const [d, s, m] = await Promise.allSettled([
		withTimeout((deps.sequelize ?? db()).query('SELECT 1'), 3000, 'database'),
		withTimeout(headBucket(deps.s3 ?? s3(), deps.bucket ?? config.storage.bucket), 3000, 'storage'),
		withTimeout((deps.mail ?? mailer()).verify(), 3000, 'mail')
	]);
	const parts: Health = {
		db: d.status === 'fulfilled' ? 'ok' : describe(d.reason),
		storage: s.status === 'fulfilled' ? 'ok' : describe(s.reason),
		mail: m.status === 'fulfilled' ? 'ok' : describe(m.reason)
	};
	return { ok: parts.db === 'ok' && parts.storage === 'ok' && parts.mail === 'ok', parts };
}
