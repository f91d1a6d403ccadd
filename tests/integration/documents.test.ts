import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { createHash, randomUUID } from 'node:crypto';
import { createServer, type AddressInfo } from 'node:net';
import { HeadObjectCommand, PutObjectCommand } from '@aws-sdk/client-s3';
import { QueryTypes } from 'sequelize';
import { client, signedIn, DEMO, BASE, type Client } from '../helpers/http';
import { demoReportItems } from '../helpers/documents';
import { db, closeDb } from '../../src/lib/server/db';
import { makeS3, storageSettings } from '../../src/lib/server/storage';
import { config } from '../../src/lib/server/config';
import { storeDocument, type DocumentRow } from '../../src/lib/server/documents/store';
import { openVerified } from '../../src/lib/server/documents/download';
import { findSubject } from '../../src/lib/server/documents/subjects';
import { cleanupOrphans } from '../../src/lib/server/documents/cleanup';
import { createReport } from '../../src/lib/server/blank-reports/service';
import { demoCsv } from '../../src/lib/server/blank-reports/demo';
import { ApiProblem } from '../../src/lib/server/api';
import type { Who } from '../../src/lib/server/registry/common';

const sq = db();
const bucket = () => ({ s3: makeS3(), bucket: config.storage.bucket });
let fennick: Client;
let marrow: Client;
let fennickItem: string;
let fennickBlank: string;
let fennickWho: Who;

const PDF = Buffer.from('%PDF-1.4\n% a small stand-in for a chromatogram export\n1 0 obj << >> endobj\ntrailer << >>\n%%EOF\n');
const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex');
const count = async (table: string) => Number((await sq.query<{ n: string }>(`SELECT count(*) AS n FROM ${table}`, { type: QueryTypes.SELECT }))[0].n);

async function raw(c: Client, method: string, path: string, body?: Buffer | string, type = 'application/pdf') {
	const headers: Record<string, string> = { origin: BASE, cookie: c.cookie!, ...(body !== undefined ? { 'content-type': type } : {}) };
	const r = await fetch(BASE + path, { method, headers, body: body as never });
	const buf = Buffer.from(await r.arrayBuffer());
	let json: any = null;
	try {
		json = JSON.parse(buf.toString('utf8'));
	} catch {
		/* binary */
	}
	return { status: r.status, headers: r.headers, buf, json };
}

const upload = (c: Client, ref: string, body: Buffer | string, type = 'application/pdf', name = 'run-1.pdf', kind = 'chromatogram') =>
	raw(c, 'POST', `/api/documents?subject=item&ref=${ref}&kind=${kind}&name=${encodeURIComponent(name)}`, body, type);

beforeAll(async () => {
	fennick = await signedIn(DEMO.fennick);
	marrow = await signedIn(DEMO.marrow);
	({ sample: fennickItem, blank: fennickBlank } = await demoReportItems(fennick));
	const [u] = await sq.query<{ id: string; lab_id: string }>(`SELECT id, lab_id FROM users WHERE email = :e`, { type: QueryTypes.SELECT, replacements: { e: DEMO.fennick } });
	fennickWho = { id: u.id, label: DEMO.fennick, role: 'lab_member', labId: u.lab_id };
});
afterAll(() => closeDb());

describe('documents over HTTP', () => {
	it('stores an upload with its SHA-256 and size, and gives the same bytes back with their digest', async () => {
		const r = await upload(fennick, fennickItem, PDF);
		expect(r.status).toBe(201);
		expect(r.json.document).toMatchObject({ name: 'run-1.pdf', contentType: 'application/pdf', sizeBytes: PDF.length, sha256: sha(PDF), kind: 'chromatogram' });
		const list = await fennick.get(`/api/documents?subject=item&ref=${fennickItem}`);
		expect(list.body.documents.map((d: { id: string }) => d.id)).toContain(r.json.document.id);
		const got = await raw(fennick, 'GET', r.json.document.href);
		expect(got.status).toBe(200);
		expect(got.buf.equals(PDF)).toBe(true);
		expect(got.headers.get('content-type')).toBe('application/pdf');
		expect(got.headers.get('content-disposition')).toContain('filename="run-1.pdf"');
		// RFC 9530: sha-256 as base64 between colons
		expect(got.headers.get('repr-digest')).toBe(`sha-256=:${createHash('sha256').update(PDF).digest('base64')}:`);
		const [trail] = await sq.query<{ action: string }>(`SELECT action FROM trail_events WHERE subject_type = 'document' AND subject_id = :id`, { type: QueryTypes.SELECT, replacements: { id: r.json.document.id } });
		expect(trail.action).toBe('document.stored');
	});

	it('refuses types outside the allow-list, content that does not match its type, and an empty file, storing nothing', async () => {
		const before = await count('documents');
		const html = await upload(fennick, fennickItem, '<html><script>alert(1)</script></html>', 'text/html', 'page.html');
		expect(html.status).toBe(415);
		expect(html.json.error.message).toMatch(/text\/html are not stored/);
		const fake = await upload(fennick, fennickItem, 'just text pretending to be a PDF', 'application/pdf', 'fake.pdf');
		expect(fake.status).toBe(415);
		expect(fake.json.error.code).toBe('type_mismatch');
		const png = await upload(fennick, fennickItem, PDF, 'image/png', 'photo.png', 'photo');
		expect(png.json.error.code).toBe('type_mismatch');
		const empty = await upload(fennick, fennickItem, Buffer.alloc(0));
		expect(empty.status).toBe(422);
		expect(await count('documents')).toBe(before);
	});

	it('attaches to a lab’s own transfer but not to another lab’s or an unknown one, and auditors may not upload', async () => {
		const unknown = await raw(fennick, 'POST', `/api/documents?subject=transfer&ref=${randomUUID()}&kind=other&name=a.pdf`, PDF);
		expect(unknown.status).toBe(404);
		const transfers = (await fennick.get('/api/transfers')).body.transfers as { id: string }[];
		expect(transfers.length).toBeGreaterThan(0);
		const own = await raw(fennick, 'POST', `/api/documents?subject=transfer&ref=${transfers[0].id}&kind=other&name=receipt-photo.pdf`, PDF);
		expect(own.status, JSON.stringify(own.json)).toBe(201);
		const marrow = await signedIn(DEMO.marrow);
		const theirs = await raw(marrow, 'POST', `/api/documents?subject=transfer&ref=${transfers[0].id}&kind=other&name=b.pdf`, PDF);
		expect(theirs.status).toBe(404);
		const auditor = await signedIn(DEMO.auditor);
		expect((await upload(auditor, fennickItem, PDF)).status).toBe(403);
	});

	it('a lab member cannot reach another lab’s document by its id, its object key, or its item', async () => {
		const r = await upload(fennick, fennickItem, PDF, 'application/pdf', 'private.pdf');
		const id = r.json.document.id;
		const [{ object_key: key }] = await sq.query<{ object_key: string }>('SELECT object_key FROM documents WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id } });
		for (const path of [`/api/documents/${id}`, `/api/documents/${id}/file`, `/api/documents/${key.split('/')[1]}/file`, `/api/documents/${encodeURIComponent(key)}/file`]) {
			const got = await marrow.get(path);
			expect(got.status, path).toBe(404);
			expect(JSON.stringify(got.body)).not.toContain('private.pdf');
		}
		expect((await marrow.get(`/api/documents?subject=item&ref=${fennickItem}`)).status).toBe(404);
		expect((await client().get(`/api/documents/${id}/file`)).status).toBe(401);
		// staff see every document
		const curator = await signedIn(DEMO.curator);
		expect((await raw(curator, 'GET', `/api/documents/${id}/file`)).buf.equals(PDF)).toBe(true);
	});

	it('detects a checksum mismatch when the object was changed in the bucket, and sends nothing of it', async () => {
		const r = await upload(fennick, fennickItem, PDF, 'application/pdf', 'tampered.pdf');
		const [{ object_key: key }] = await sq.query<{ object_key: string }>('SELECT object_key FROM documents WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: r.json.document.id } });
		const s3 = makeS3();
		// same length, one byte changed: only the hash can tell
		const changed = Buffer.from(PDF);
		changed[20] ^= 0x01;
		await s3.send(new PutObjectCommand({ Bucket: config.storage.bucket, Key: key, Body: changed, ContentType: 'application/pdf' }));
		const got = await raw(fennick, 'GET', r.json.document.href);
		expect(got.status).toBe(502);
		expect(got.json.error.code).toBe('checksum_mismatch');
		expect(got.json.error.message).toMatch(/does not match the checksum recorded/);
		expect(got.json.error.expectedSha256).toBe(sha(PDF));
		expect(got.json.error.foundSha256).toBe(sha(changed));
		s3.destroy();
	});
});

describe('documents in-process', () => {
	it('streams a large body to the bucket in parts, never whole, and reads it back verified', async () => {
		const subject = await findSubject(sq, fennickWho, 'item', fennickItem);
		const chunk = Buffer.alloc(256 * 1024);
		const hash = createHash('sha256');
		async function* body() {
			// 12 MiB of a PDF-looking stream, in 48 chunks (multipart upload above 5 MB)
			for (let i = 0; i < 48; i++) {
				const c = Buffer.from(chunk);
				if (i === 0) c.write('%PDF-1.7\n');
				c.writeUInt32BE(i, 100);
				hash.update(c);
				yield c;
			}
		}
		const target = bucket();
		const row = await storeDocument(sq, fennickWho, { subject, kind: 'chromatogram', name: 'long-run.pdf', contentType: 'application/pdf', body: body() }, { target });
		expect(Number(row.size_bytes)).toBe(48 * 256 * 1024);
		expect(row.sha256).toBe(hash.digest('hex'));
		const back = createHash('sha256');
		let size = 0;
		for await (const c of (await openVerified(row, target)) as unknown as AsyncIterable<Uint8Array>) {
			back.update(c);
			size += c.length;
		}
		expect(size).toBe(48 * 256 * 1024);
		expect(back.digest('hex')).toBe(row.sha256);
		target.s3.destroy();
	});

	it('refuses a body over the size limit while streaming, with no record and no object left', async () => {
		const subject = await findSubject(sq, fennickWho, 'item', fennickItem);
		const before = await count('documents');
		async function* body() {
			yield Buffer.from('%PDF-1.4\n' + 'x'.repeat(4000));
			yield Buffer.alloc(8000);
		}
		const target = bucket();
		const e = await storeDocument(sq, fennickWho, { subject, kind: 'other', name: 'big.pdf', contentType: 'application/pdf', body: body() }, { target, maxBytes: 10_000 }).catch((x) => x);
		expect(e).toBeInstanceOf(ApiProblem);
		expect(e.status).toBe(413);
		expect(e.message).toMatch(/larger than the limit/);
		const declared = await storeDocument(sq, fennickWho, { subject, kind: 'other', name: 'big.pdf', contentType: 'application/pdf', declaredLength: 20_000, body: body() }, { target, maxBytes: 10_000 }).catch((x) => x);
		expect(declared.status).toBe(413);
		expect(await count('documents')).toBe(before);
		target.s3.destroy();
	});

	it('with the object store unreachable: a clear 503, no document record and no report', async () => {
		// a port nothing listens on: taken from the system, then released
		const port = await new Promise<number>((resolve) => {
			const srv = createServer().listen(0, '127.0.0.1', () => {
				const p = (srv.address() as AddressInfo).port;
				srv.close(() => resolve(p));
			});
		});
		const s3 = makeS3({ ...storageSettings(), endpoint: `http://127.0.0.1:${port}`, bucket: 'down-bucket' });
		const target = { s3, bucket: 'down-bucket' };
		const subject = await findSubject(sq, fennickWho, 'item', fennickItem);
		const [docs, reports, rows] = [await count('documents'), await count('blank_control_reports'), await count('blank_control_rows')];
		const e = await storeDocument(sq, fennickWho, { subject, kind: 'photo', name: 'p.pdf', contentType: 'application/pdf', body: [PDF] }, { target }).catch((x) => x);
		expect(e).toBeInstanceOf(ApiProblem);
		expect(e.status).toBe(503);
		expect(e.code).toBe('storage_unavailable');
		expect(e.message).toMatch(/not reachable.*nothing was saved/);
		const r = await createReport(sq, fennickWho, { title: 'while storage is down', fileName: 'x.csv', contentType: 'text/csv', bytes: Buffer.from(demoCsv(fennickItem, fennickBlank)) }, { target }).catch((x) => x);
		expect(r.status).toBe(503);
		expect([await count('documents'), await count('blank_control_reports'), await count('blank_control_rows')]).toEqual([docs, reports, rows]);
		s3.destroy();
	});

	it('the clean-up removes objects without a record past the grace period, and keeps recorded and young ones', async () => {
		const target = bucket();
		const orphan = `documents/${randomUUID()}`;
		await target.s3.send(new PutObjectCommand({ Bucket: target.bucket, Key: orphan, Body: 'left by a failed save' }));
		const [kept] = await sq.query<DocumentRow>('SELECT * FROM documents ORDER BY uploaded_at LIMIT 1', { type: QueryTypes.SELECT });
		const young = await cleanupOrphans(sq, { target, graceMs: 60 * 60_000 });
		expect(young.removed).not.toContain(orphan);
		expect(young.young).toBeGreaterThanOrEqual(1);
		const old = await cleanupOrphans(sq, { target, graceMs: 0, now: new Date(Date.now() + 1000) });
		expect(old.removed).toContain(orphan);
		expect(old.removed).not.toContain(kept.object_key);
		await expect(target.s3.send(new HeadObjectCommand({ Bucket: target.bucket, Key: orphan }))).rejects.toThrow();
		await expect(target.s3.send(new HeadObjectCommand({ Bucket: target.bucket, Key: kept.object_key }))).resolves.toBeTruthy();
		target.s3.destroy();
	});
});
