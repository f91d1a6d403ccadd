// The two run profiles: "dev" for `npm start`, "test" for `npm test`. Each has its own
// PostgreSQL cluster, fake storage and mailbox under .regolog/<profile>/ (git-ignored),
// and its own ports, so the test run never touches the demo data.
import { resolve } from 'node:path';

const PROFILES = {
	dev: { app: 4310, db: 54310, s3: 54311, smtp: 54312, dbName: 'regolog' },
	test: { app: 4320, db: 24320, s3: 24321, smtp: 24322, dbName: 'regolog_test' }
};

export function profile(name) {
	const p = PROFILES[name];
	if (!p) throw new Error(`unknown profile "${name}"`);
	const root = resolve(process.env.REGOLOG_DATA_DIR ?? `.regolog/${name}`);
	const num = (k, d) => Number(process.env[k] ?? d);
	// REGOLOG_PORT_BASE moves every port of the profile at once, so two checkouts can test side by side.
	const base = process.env.REGOLOG_PORT_BASE ? Number(process.env.REGOLOG_PORT_BASE) : null;
	const at = (offset, fallback) => (base === null ? fallback : base + offset);
	return {
		name,
		root,
		portBase: base ?? p.db,
		appPort: num('PORT', at(6, p.app)),
		dbPort: num('REGOLOG_DB_PORT', at(0, p.db)),
		s3Port: num('REGOLOG_S3_PORT', at(1, p.s3)),
		smtpPort: num('REGOLOG_SMTP_PORT', at(2, p.smtp)),
		dbName: process.env.REGOLOG_DB_NAME ?? p.dbName,
		s3Dir: resolve(root, 's3'),
		mailDir: resolve(root, 'mail'),
		logDir: resolve(root, 'logs')
	};
}

/** The environment the app, migrations, seed and tests see for a profile. */
export function appEnv(pr) {
	return {
		PORT: String(pr.appPort),
		HOST: '127.0.0.1',
		ORIGIN: process.env.ORIGIN ?? `http://127.0.0.1:${pr.appPort}`,
		REGOLOG_DB_HOST: '127.0.0.1',
		REGOLOG_DB_PORT: String(pr.dbPort),
		REGOLOG_DB_NAME: pr.dbName,
		REGOLOG_DB_USER: process.env.REGOLOG_DB_USER ?? 'regolog',
		REGOLOG_DB_PASSWORD: process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local',
		// the role that owns the schema and runs the migrations; the app's own role above cannot alter it
		REGOLOG_DB_OWNER: process.env.REGOLOG_DB_OWNER ?? 'regolog_owner',
		REGOLOG_DB_OWNER_PASSWORD: process.env.REGOLOG_DB_OWNER_PASSWORD ?? 'regolog-owner-local',
		REGOLOG_DATA_DIR: pr.root,
		REGOLOG_S3_ENDPOINT: process.env.REGOLOG_S3_ENDPOINT ?? `http://127.0.0.1:${pr.s3Port}`,
		REGOLOG_S3_BUCKET: process.env.REGOLOG_S3_BUCKET ?? 'regolog-documents',
		REGOLOG_SMTP_HOST: '127.0.0.1',
		REGOLOG_SMTP_PORT: String(pr.smtpPort),
		REGOLOG_MAIL_DIR: pr.mailDir,
		REGOLOG_SMTP_PID_FILE: resolve(pr.root, 'smtp.pid'),
		// adapter-node refuses bodies above BODY_SIZE_LIMIT (512 KiB by default): let documents up to
		// their own limit through; the upload endpoint enforces that limit itself while streaming.
		BODY_SIZE_LIMIT: process.env.BODY_SIZE_LIMIT ?? String(Number(process.env.REGOLOG_DOCUMENT_MAX_BYTES ?? 50 * 1024 * 1024) + 1024 * 1024),
		// Ports the tests themselves use: a scratch cluster, a scratch object store, the API test server.
		REGOLOG_TEST_PORT_SCRATCH_DB: String(pr.portBase + 3),
		REGOLOG_TEST_PORT_SCRATCH_S3: String(pr.portBase + 4),
		REGOLOG_API_TEST_PORT: process.env.REGOLOG_API_TEST_PORT ?? String(pr.portBase + 5)
	};
}
