// A bundle file verified in node, with nothing but the file: the shared rules (trail-verify.ts)
// and node's own SHA-256 and Ed25519. `npx regolog-verify` runs this.
import { createReadStream } from 'node:fs';
import { BundleVerifier, type BundleResult } from '../../domain/trail-verify';
import { workerTrailCrypto } from './hash-worker';

export async function verifyBundleFile(path: string, opts: { onProgress?: (bytes: number, events: number) => void } = {}): Promise<BundleResult> {
	// SHA-256 on a worker thread while this one reads and checks
	const crypto = workerTrailCrypto();
	const v = new BundleVerifier(crypto);
	const stream = createReadStream(path, { highWaterMark: 1 << 20 });
	try {
		for await (const chunk of stream) {
			await v.push(chunk as Buffer);
			opts.onProgress?.(v.bytesRead, v.eventsRead);
			if (v.done) break;
		}
		return await v.end();
	} finally {
		stream.destroy();
		await crypto.close();
	}
}

/** The command line: exit status 0 when the bundle is intact, 1 when broken (the first broken event named), 2 on bad use. */
export async function verifyCli(argv: string[], out: (s: string) => void = console.log, err: (s: string) => void = console.error): Promise<number> {
	const files = argv.filter((a) => !a.startsWith('-'));
	if (files.length !== 1 || argv.includes('--help')) {
		err('usage: regolog-verify <bundle.ndjson> [--json]\n  verifies a Regolog trail bundle (GET /api/trail/export) offline; exit status 0 when intact, 1 when not');
		return 2;
	}
	let r: BundleResult;
	try {
		r = await verifyBundleFile(files[0]);
	} catch (e) {
		err(`regolog-verify: cannot read ${files[0]}: ${(e as Error).message}`);
		return 2;
	}
	if (argv.includes('--json')) out(JSON.stringify(r));
	else if (r.ok) out(`intact: events ${r.from}–${r.to} (${r.events}) link up and match their hashes; ${r.checkpoints.valid} of ${r.checkpoints.total} checkpoints carry a valid signature and the chain leads to ${r.checkpoints.matched}; head ${r.head}`);
	else out(`BROKEN at event ${r.firstBrokenAt}: ${r.reason} (${r.events} events before it are intact)`);
	return r.ok ? 0 : 1;
}
