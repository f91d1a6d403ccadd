// Local S3-compatible object store for development and tests (s3rver), on loopback only.
// Usage: node fakes/s3.mjs --port 54311 --dir .regolog/dev/s3 --bucket regolog-documents
import S3rver from 's3rver';
import { mkdirSync } from 'node:fs';
import { parseArgs } from 'node:util';

export async function startS3({ port, dir, bucket }) {
	mkdirSync(dir, { recursive: true });
	const server = new S3rver({
		port,
		address: '127.0.0.1',
		directory: dir,
		silent: true,
		configureBuckets: [{ name: bucket }]
	});
	await server.run();
	return server;
}

if (import.meta.url === `file://${process.argv[1]}`) {
	const { values } = parseArgs({
		options: {
			port: { type: 'string', default: '54311' },
			dir: { type: 'string', default: '.regolog/dev/s3' },
			bucket: { type: 'string', default: 'regolog-documents' }
		}
	});
	const server = await startS3({ port: Number(values.port), dir: values.dir, bucket: values.bucket });
	console.log(`fake S3 listening on http://127.0.0.1:${values.port} (bucket ${values.bucket})`);
	const stop = () => server.close().finally(() => process.exit(0));
	process.on('SIGTERM', stop);
	process.on('SIGINT', stop);
}
