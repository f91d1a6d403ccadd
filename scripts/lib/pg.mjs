// PostgreSQL lifecycle for the project: a cluster of its own, on 127.0.0.1 at a project port,
// run as the `postgres` OS user when we are root (initdb and postgres refuse root).
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, writeFileSync, rmSync, chownSync, accessSync } from 'node:fs';
import { createHash, randomBytes } from 'node:crypto';
import { dirname, join, resolve } from 'node:path';
import net from 'node:net';
import os from 'node:os';

const isRoot = process.getuid?.() === 0;

export function pgBinDir() {
	if (process.env.REGOLOG_PG_BIN) return process.env.REGOLOG_PG_BIN;
	for (const v of ['17', '16', '15']) {
		const d = `/usr/lib/postgresql/${v}/bin`;
		if (existsSync(join(d, 'initdb'))) return d;
	}
	return null;
}

/** Installs Debian's postgresql package when its programs are missing. */
export function ensurePgInstalled(log = console.log) {
	if (pgBinDir()) return pgBinDir();
	if (!isRoot) {
		throw new Error(
			'PostgreSQL server programs are missing. Install them with: sudo apt-get install -y postgresql ' +
				'(or set REGOLOG_PG_BIN to the folder holding initdb and pg_ctl).'
		);
	}
	log('installing PostgreSQL from Debian packages (apt-get install postgresql)…');
	execFileSync('apt-get', ['update', '-qq'], { stdio: 'inherit' });
	execFileSync('apt-get', ['install', '-y', '-qq', 'postgresql'], {
		stdio: 'inherit',
		env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
	});
	const bin = pgBinDir();
	if (!bin) throw new Error('apt-get installed postgresql but initdb was not found under /usr/lib/postgresql');
	return bin;
}

function asPostgres(cmd, args, opts = {}) {
	const [c, a] = isRoot ? ['runuser', ['-u', 'postgres', '--', cmd, ...args]] : [cmd, args];
	return spawnSync(c, a, { encoding: 'utf8', ...opts });
}

function postgresCanEnter(dir) {
	if (!isRoot) return true;
	// Every folder above the cluster must be traversable by the postgres user.
	const r = spawnSync('runuser', ['-u', 'postgres', '--', 'test', '-x', dir]);
	return r.status === 0;
}

/** Where the cluster lives: inside the profile folder, or under the temp space when the postgres user cannot reach it. */
export function clusterDir(root, log = console.log) {
	mkdirSync(root, { recursive: true });
	if (postgresCanEnter(root)) return join(root, 'pg');
	const tag = createHash('sha256').update(resolve(root)).digest('hex').slice(0, 12);
	const alt = join(os.tmpdir(), `regolog-${tag}`, 'pg');
	mkdirSync(dirname(alt), { recursive: true, mode: 0o755 });
	log(`the postgres user cannot enter ${root}; keeping the cluster in ${alt}`);
	return alt;
}

function chownPostgres(path) {
	if (!isRoot) return;
	const uid = Number(execFileSync('id', ['-u', 'postgres']).toString().trim());
	const gid = Number(execFileSync('id', ['-g', 'postgres']).toString().trim());
	chownSync(path, uid, gid);
}

export function superuserPassword(dir) {
	mkdirSync(dirname(dir), { recursive: true });
	const f = join(dirname(dir), 'pg-superuser-password');
	if (!existsSync(f)) writeFileSync(f, randomBytes(18).toString('base64url'), { mode: 0o600 });
	return readFileSync(f, 'utf8').trim();
}

export function portOpen(port, host = '127.0.0.1') {
	return new Promise((res) => {
		const s = net.connect({ port, host });
		s.once('connect', () => { s.destroy(); res(true); });
		s.once('error', () => res(false));
	});
}

function processIsPostgres(pid) {
	try {
		const comm = readFileSync(`/proc/${pid}/comm`, 'utf8').trim();
		return comm === 'postgres' || comm === 'postmaster';
	} catch {
		return false;
	}
}

/** Removes postmaster.pid when the process it names is gone (a crashed server). */
export function recoverStalePid(dir, log = console.log) {
	const f = join(dir, 'postmaster.pid');
	if (!existsSync(f)) return false;
	const pid = Number(readFileSync(f, 'utf8').split('\n')[0]);
	if (Number.isInteger(pid) && pid > 0 && processIsPostgres(pid)) return false;
	log(`removing stale ${f} (process ${pid} is not running)`);
	rmSync(f);
	return true;
}

export async function startCluster({ root, port, log = console.log }) {
	const bin = ensurePgInstalled(log);
	const dir = clusterDir(root, log);
	const password = superuserPassword(dir);
	if (!existsSync(join(dir, 'PG_VERSION'))) {
		mkdirSync(dir, { recursive: true });
		chownPostgres(dir);
		const pwfile = join(dir, '..', '.pwfile');
		writeFileSync(pwfile, password + '\n', { mode: 0o644 });
		const r = asPostgres(join(bin, 'initdb'), [
			'-D', dir, '-U', 'postgres', `--pwfile=${pwfile}`,
			'--auth-host=scram-sha-256', '--auth-local=scram-sha-256', '-E', 'UTF8', '--locale=C.UTF-8'
		]);
		rmSync(pwfile, { force: true });
		if (r.status !== 0) throw new Error(`initdb failed:\n${r.stderr || r.stdout}`);
		log(`created PostgreSQL cluster in ${dir}`);
	}
	const logFile = join(dir, 'server.log');
	if (await portOpen(port)) {
		const st = asPostgres(join(bin, 'pg_ctl'), ['-D', dir, 'status']);
		if (st.status === 0) return { dir, password, reused: true };
		throw new Error(`port ${port} is taken by another program; set REGOLOG_DB_PORT to a free port`);
	}
	recoverStalePid(dir, log);
	const r = asPostgres(join(bin, 'pg_ctl'), [
		'-D', dir, '-l', logFile, '-w', '-t', '60',
		'-o', `-p ${port} -c listen_addresses=127.0.0.1 -c unix_socket_directories=${dir} -c max_connections=200 -c fsync=on`,
		'start'
	]);
	if (r.status !== 0) {
		let tail = '';
		try { tail = readFileSync(logFile, 'utf8').split('\n').slice(-15).join('\n'); } catch {}
		throw new Error(`PostgreSQL did not start on port ${port}:\n${r.stdout}${r.stderr}\n${tail}`);
	}
	for (let i = 0; i < 100 && !(await portOpen(port)); i++) await new Promise((s) => setTimeout(s, 100));
	return { dir, password, reused: false };
}

export function stopCluster({ root, log = console.log }) {
	const bin = pgBinDir();
	if (!bin) return false;
	const dir = clusterDir(root, () => {});
	if (!existsSync(join(dir, 'PG_VERSION'))) return false;
	const r = asPostgres(join(bin, 'pg_ctl'), ['-D', dir, '-m', 'fast', '-w', 'stop']);
	if (r.status === 0) log('PostgreSQL stopped');
	return r.status === 0;
}

export function clusterStatus({ root }) {
	const bin = pgBinDir();
	if (!bin) return 'not installed';
	const dir = clusterDir(root, () => {});
	if (!existsSync(join(dir, 'PG_VERSION'))) return 'no cluster';
	return asPostgres(join(bin, 'pg_ctl'), ['-D', dir, 'status']).status === 0 ? 'running' : 'stopped';
}

/**
 * Creates the two roles and the database when missing; with fresh=true, drops the database first.
 * The owner role (`owner`) owns the database, the schema and every table, trigger and function, and
 * runs the migrations; the app's login role (`user`) gets only the rights the migrator grants it
 * (migrator.ts). A database from before the split, where the app role owned everything, is handed
 * over to the owner role in place (REASSIGN OWNED), so `npm start` upgrades an existing cluster.
 */
export const DEFAULT_OWNER = 'regolog_owner';
export const DEFAULT_OWNER_PASSWORD = 'regolog-owner-local';

export async function ensureDatabase({
	port, password, dbName, user, userPassword,
	owner = process.env.REGOLOG_DB_OWNER || DEFAULT_OWNER,
	ownerPassword = process.env.REGOLOG_DB_OWNER_PASSWORD || DEFAULT_OWNER_PASSWORD,
	fresh = false, log = () => {}
}) {
	const pg = (await import('pg')).default;
	if (!owner || owner === user) throw new Error('the owner role must be another role than the app role (REGOLOG_DB_OWNER)');
	const admin = new pg.Client({ host: '127.0.0.1', port, user: 'postgres', password, database: 'postgres' });
	await admin.connect();
	const ident = (s) => '"' + s.replace(/"/g, '""') + '"';
	const lit = (s) => "'" + s.replace(/'/g, "''") + "'";
	let created = false;
	try {
		for (const [role, pw] of [[owner, ownerPassword], [user, userPassword]]) {
			const found = await admin.query('SELECT 1 FROM pg_roles WHERE rolname = $1', [role]);
			// neither role may create roles or databases, or bypass row rights; the app role is no superuser
			const opts = `LOGIN NOSUPERUSER NOCREATEDB NOCREATEROLE NOREPLICATION NOBYPASSRLS PASSWORD ${lit(pw)}`;
			if (found.rowCount === 0) await admin.query(`CREATE ROLE ${ident(role)} ${opts}`);
			else await admin.query(`ALTER ROLE ${ident(role)} ${opts}`);
		}
		if (fresh) await admin.query(`DROP DATABASE IF EXISTS ${ident(dbName)} WITH (FORCE)`);
		const exists = await admin.query('SELECT pg_get_userbyid(datdba) AS owner FROM pg_database WHERE datname = $1', [dbName]);
		if (exists.rowCount === 0) {
			await admin.query(`CREATE DATABASE ${ident(dbName)} OWNER ${ident(owner)}`);
			created = true;
		}
	} finally {
		await admin.end();
	}
	// in the database itself: the owner owns the schema and all in it; nobody else may create there
	const inDb = new pg.Client({ host: '127.0.0.1', port, user: 'postgres', password, database: dbName });
	await inDb.connect();
	try {
		const held = await inDb.query(
			`SELECT count(*)::int AS n FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
			 WHERE n.nspname = 'public' AND c.relowner = (SELECT oid FROM pg_roles WHERE rolname = $1)`,
			[user]
		);
		if (held.rows[0].n > 0) log(`handing ${held.rows[0].n} tables and other objects of ${dbName} over from ${user} to the owner role ${owner}`);
		// REASSIGN OWNED also moves the database itself when the app role owned it
		await inDb.query(`REASSIGN OWNED BY ${ident(user)} TO ${ident(owner)}`);
		await inDb.query(`ALTER DATABASE ${ident(dbName)} OWNER TO ${ident(owner)}`);
		await inDb.query(`ALTER SCHEMA public OWNER TO ${ident(owner)}`);
		await inDb.query(`REVOKE CREATE ON SCHEMA public FROM PUBLIC`);
		await inDb.query(`REVOKE ALL ON DATABASE ${ident(dbName)} FROM ${ident(user)}`);
		await inDb.query(`GRANT CONNECT, TEMPORARY ON DATABASE ${ident(dbName)} TO ${ident(user)}`);
		await inDb.query(`GRANT USAGE ON SCHEMA public TO ${ident(user)}`);
	} finally {
		await inDb.end();
	}
	return { created };
}
