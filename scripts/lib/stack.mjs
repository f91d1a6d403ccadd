// Starts and stops what Regolog runs on: PostgreSQL and the local fakes for storage and mail.
import { spawn, spawnSync, execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, rmSync, statSync, readdirSync, openSync, writeFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { profile, appEnv } from './profile.mjs';
import { startCluster, stopCluster, ensureDatabase, portOpen } from './pg.mjs';

export function log(msg) {
	console.log(`[regolog] ${msg}`);
}

/** Installs node modules with `npm ci` when they are missing or older than the lock file. */
export function ensureNodeModules() {
	const marker = 'node_modules/.package-lock.json';
	const stale = !existsSync(marker) || statSync('package-lock.json').mtimeMs > statSync(marker).mtimeMs + 1000;
	if (!stale) return;
	log('installing node modules (npm ci)…');
	const r = spawnSync('npm', ['ci', '--no-audit', '--no-fund'], { stdio: 'inherit' });
	if (r.status !== 0) throw new Error('npm ci failed');
}

export async function waitForPort(port, what, ms = 20_000) {
	const until = Date.now() + ms;
	while (Date.now() < until) {
		if (await portOpen(port)) return;
		await new Promise((r) => setTimeout(r, 100));
	}
	throw new Error(`${what} did not open port ${port} within ${ms / 1000} s`);
}

function spawnLogged(name, cmd, args, env, logDir) {
	mkdirSync(logDir, { recursive: true });
	const out = openSync(join(logDir, `${name}.log`), 'a');
	return spawn(cmd, args, { env: { ...process.env, ...env }, stdio: ['ignore', out, out] });
}

export async function startFakes(pr) {
	for (const [port, what] of [[pr.s3Port, 'fake S3'], [pr.smtpPort, 'fake SMTP']]) {
		if (await portOpen(port)) throw new Error(`port ${port} for ${what} is already in use; stop the other Regolog or set its port`);
	}
	const s3 = spawnLogged('s3', process.execPath, ['fakes/s3.mjs', '--port', String(pr.s3Port), '--dir', pr.s3Dir], {}, pr.logDir);
	const smtp = spawnLogged('smtp', process.execPath, ['fakes/smtp.mjs', '--port', String(pr.smtpPort), '--dir', pr.mailDir], {}, pr.logDir);
	// Pid files let a test stop and restart a fake, and the stack's stop end a restarted one.
	writeFileSync(join(pr.root, 's3.pid'), String(s3.pid));
	writeFileSync(join(pr.root, 'smtp.pid'), String(smtp.pid));
	await waitForPort(pr.s3Port, 'fake S3');
	await waitForPort(pr.smtpPort, 'fake SMTP');
	return [s3, smtp];
}

/**
 * Brings up the whole stack for a profile. With fresh=true (tests) the database is recreated and
 * the fake bucket and mailbox are emptied. Returns the app environment and a stop function.
 */
export async function startStack(name, { fresh = false } = {}) {
	const pr = profile(name);
	mkdirSync(pr.root, { recursive: true });
	const env = appEnv(pr);
	const t0 = Date.now();
	const cluster = await startCluster({ root: pr.root, port: pr.dbPort, log });
	log(`PostgreSQL ${cluster.reused ? 'already running' : 'started'} on 127.0.0.1:${pr.dbPort}`);
	await ensureDatabase({
		port: pr.dbPort,
		password: cluster.password,
		dbName: pr.dbName,
		user: env.REGOLOG_DB_USER,
		userPassword: env.REGOLOG_DB_PASSWORD,
		owner: env.REGOLOG_DB_OWNER,
		ownerPassword: env.REGOLOG_DB_OWNER_PASSWORD,
		fresh,
		log
	});
	if (fresh) {
		rmSync(pr.s3Dir, { recursive: true, force: true });
		rmSync(pr.mailDir, { recursive: true, force: true });
	}
	const children = await startFakes(pr);
	log(`fakes up: S3 on 127.0.0.1:${pr.s3Port}, SMTP on 127.0.0.1:${pr.smtpPort} (mail kept in ${pr.mailDir})`);
	env.REGOLOG_PG_ADMIN_PASSWORD = cluster.password;
	log(`services ready in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
	let stopped = false;
	return {
		pr,
		env,
		children,
		stop() {
			if (stopped) return;
			stopped = true;
			for (const c of children) if (c.exitCode === null) c.kill('SIGTERM');
			for (const name of ['s3', 'smtp']) {
				const f = join(pr.root, `${name}.pid`);
				try {
					process.kill(Number(readFileSync(f, 'utf8')), 'SIGTERM');
				} catch {
					/* already gone */
				}
				rmSync(f, { force: true });
			}
			stopCluster({ root: pr.root, log });
		}
	};
}

export function run(cmd, args, env, opts = {}) {
	const r = spawnSync(cmd, args, { stdio: 'inherit', env: { ...process.env, ...env }, ...opts });
	return r.status ?? 1;
}

/** The newest modification time among the files a production build is made from. */
export function newestSourceMtime(paths) {
	let newest = 0;
	const walk = (p) => {
		if (!existsSync(p)) return;
		const st = statSync(p);
		if (st.isDirectory()) for (const e of readdirSync(p)) walk(join(p, e));
		else newest = Math.max(newest, st.mtimeMs);
	};
	paths.forEach(walk);
	return newest;
}

export function buildIsStale() {
	const stamp = 'build/handler.js';
	if (!existsSync(stamp)) return true;
	const src = newestSourceMtime(['src', 'static', 'svelte.config.js', 'vite.config.ts', 'tailwind.config.ts', 'postcss.config.js', 'package-lock.json']);
	return src > statSync(stamp).mtimeMs;
}

/** Installs a Debian package when the program it provides is missing (as root; otherwise says what to install). */
export function ensureDebianTool(pkg, program) {
	if (existsSync(program)) return;
	if (process.getuid?.() !== 0) throw new Error(`${program} is missing: install it with sudo apt-get install -y ${pkg}`);
	log(`installing ${pkg} from Debian packages (apt-get install ${pkg})…`);
	execFileSync('apt-get', ['update', '-qq'], { stdio: 'inherit' });
	execFileSync('apt-get', ['install', '-y', '-qq', pkg], { stdio: 'inherit', env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' } });
}

/** The browser for end-to-end tests, and pdftoppm for rendering label PDFs in tests. */
export function ensureTestTools() {
	ensureDebianTool('chromium', '/usr/bin/chromium');
	ensureDebianTool('poppler-utils', '/usr/bin/pdftoppm');
}
