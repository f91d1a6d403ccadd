/**
 * Runtime configuration, read from the environment once. Every variable and its default is
 * listed in README.md. Only process.env is used so that the app, the scripts and the tests
 * share this module.
 */
function env(name: string, fallback: string): string {
	const v = process.env[name];
	return v === undefined || v === '' ? fallback : v;
}

function int(name: string, fallback: number): number {
	const raw = env(name, String(fallback));
	const n = Number(raw);
	if (!Number.isInteger(n) || n <= 0) throw new Error(`${name} must be a positive integer, got "${raw}"`);
	return n;
}

export const config = {
	get origin() {
		return env('ORIGIN', `http://127.0.0.1:${int('PORT', 4310)}`);
	},
	db: {
		get host() { return env('REGOLOG_DB_HOST', '127.0.0.1'); },
		get port() { return int('REGOLOG_DB_PORT', 54310); },
		get name() { return env('REGOLOG_DB_NAME', 'regolog'); },
		get user() { return env('REGOLOG_DB_USER', 'regolog'); },
		get password() { return env('REGOLOG_DB_PASSWORD', 'regolog-local'); },
		get poolMax() { return int('REGOLOG_DB_POOL', 20); }
	},
	storage: {
		get endpoint() { return env('REGOLOG_S3_ENDPOINT', 'http://127.0.0.1:54311'); },
		get region() { return env('REGOLOG_S3_REGION', 'us-east-1'); },
		get bucket() { return env('REGOLOG_S3_BUCKET', 'regolog-documents'); },
		get accessKeyId() { return env('REGOLOG_S3_ACCESS_KEY', 'S3RVER'); },
		get secretAccessKey() { return env('REGOLOG_S3_SECRET_KEY', 'S3RVER'); },
		get forcePathStyle() { return env('REGOLOG_S3_PATH_STYLE', 'true') === 'true'; }
	},
	documents: {
		/** largest document accepted, in bytes (default 50 MiB) */
		get maxBytes() { return int('REGOLOG_DOCUMENT_MAX_BYTES', 50 * 1024 * 1024); },
		/** largest blank-control CSV accepted, in bytes (default 2 MiB); it is parsed in memory */
		get reportMaxBytes() { return int('REGOLOG_REPORT_MAX_BYTES', 2 * 1024 * 1024); },
		/** objects without a record younger than this are left alone by the clean-up (default 1 h) */
		get orphanGraceMinutes() { return int('REGOLOG_ORPHAN_GRACE_MINUTES', 60); },
		/** how often the server runs the clean-up (default every 6 h) */
		get cleanupEveryMinutes() { return int('REGOLOG_CLEANUP_EVERY_MINUTES', 360); }
	},
	mail: {
		get host() { return env('REGOLOG_SMTP_HOST', '127.0.0.1'); },
		get port() { return int('REGOLOG_SMTP_PORT', 54312); },
		get secure() { return env('REGOLOG_SMTP_SECURE', 'false') === 'true'; },
		get user() { return env('REGOLOG_SMTP_USER', ''); },
		get password() { return env('REGOLOG_SMTP_PASSWORD', ''); },
		get from() { return env('REGOLOG_MAIL_FROM', 'Regolog <regolog@brightwater.example>'); }
	}
};
