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
		get poolMax() { return int('REGOLOG_DB_POOL', 20); },
		/** the role that owns the schema, its triggers and functions, and runs the migrations */
		get owner() { return env('REGOLOG_DB_OWNER', 'regolog_owner'); },
		get ownerPassword() { return env('REGOLOG_DB_OWNER_PASSWORD', 'regolog-owner-local'); }
	},
	/** runtime data folder (the trail's signing key lives here unless given in the environment) */
	get dataDir() { return env('REGOLOG_DATA_DIR', '.regolog/dev'); },
	trail: {
		/** the Ed25519 signing key as PKCS #8 PEM; when set, no key file is used */
		get signingKey() { return env('REGOLOG_TRAIL_SIGNING_KEY', ''); },
		/** the key file (PKCS #8 PEM, mode 0600), made on first use */
		get keyFile() { return env('REGOLOG_TRAIL_KEY_FILE', `${env('REGOLOG_DATA_DIR', '.regolog/dev')}/trail-signing-key.pem`); },
		/** witnesses' addresses, comma-separated; empty: every active auditor */
		get witnesses() { return env('REGOLOG_TRAIL_WITNESSES', '').split(',').map((s) => s.trim()).filter(Boolean); },
		/** a checkpoint after this many events */
		get checkpointEvery() { return int('REGOLOG_TRAIL_CHECKPOINT_EVERY', 1000); },
		/** and at least this often (minutes) while anything is appended */
		get checkpointMinutes() { return int('REGOLOG_TRAIL_CHECKPOINT_MINUTES', 60); }
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
