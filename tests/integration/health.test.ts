import { describe, it, expect, afterAll } from 'vitest';
import { checkHealth } from '../../src/lib/server/health';
import { makeS3, storageSettings } from '../../src/lib/server/storage';
import { closeDb } from '../../src/lib/server/db';
import { startS3 } from '../../fakes/s3.mjs';
import { mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { holdPort, release } from '../helpers/ports';

afterAll(() => closeDb());

describe('health', () => {
	it('reports every part ok against the running services', async () => {
		const r = await checkHealth();
		expect(r.parts).toEqual({ db: 'ok', storage: 'ok', mail: 'ok' });
		expect(r.ok).toBe(true);
	});

	it('names storage as failing when the object store is stopped, and recovers when it returns', async () => {
		const dir = mkdtempSync(join(process.cwd(), '.regolog', 's3-health-'));
		const port = Number(process.env.REGOLOG_TEST_PORT_SCRATCH_S3 ?? 24324);
		const settings = { ...storageSettings(), endpoint: `http://127.0.0.1:${port}`, bucket: 'health-bucket' };
		const server = await startS3({ port, dir, bucket: 'health-bucket' });
		// Each phase uses its own client so no kept-alive socket holds the stopped server open.
		const up = makeS3(settings);
		expect((await checkHealth({ s3: up, bucket: 'health-bucket' })).parts.storage).toBe('ok');
		up.destroy();
		await server.close();
		// down, with its port held so that it can come back on it (see holdPort)
		const dropper = await holdPort(port);
		const client = makeS3(settings);
		const down = await checkHealth({ s3: client, bucket: 'health-bucket' });
		client.destroy();
		expect(down.ok).toBe(false);
		expect(down.parts.db).toBe('ok');
		expect(down.parts.storage).toMatch(/^unavailable/);
		await release(dropper);
		const back = await startS3({ port, dir, bucket: 'health-bucket' });
		const again = makeS3(settings);
		expect((await checkHealth({ s3: again, bucket: 'health-bucket' })).parts.storage).toBe('ok');
		again.destroy();
		await back.close();
		rmSync(dir, { recursive: true, force: true });
	});
});
