// `npm run bench:labels`: 500 labels on A4 sheets, streamed to nowhere, in three variants run
// one after the other in separate child processes so each peak memory is its own:
//   vector  — what Regolog prints: QR as vector modules;
//   raster  — reference: the same 500 labels with the QR as an embedded PNG;
//   single  — reference: one label's PDF, rendered 500 times.
// Prints wall time, peak RSS (resourceUsage().maxRSS) and output size, and the ratios to vector.
import { spawnSync } from 'node:child_process';
import { Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { fileURLToPath } from 'node:url';

const N = 500;
const ORIGIN = 'https://regolog.brightwater.example';

async function child(variant: string) {
	const { renderLabels } = await import('../src/lib/server/labels/render');
	const { formatCode } = await import('../src/lib/domain/codes');
	const label = (i: number) => ({
		code: formatCode(['TRN', 'HLF', 'ICE'][i % 3], 1 + i),
		collection: ['TRN · Lantern return from Tarnwick', 'HLF · Hollins Ford fall', 'ICE · Interstellar-ice analogue runs'][i % 3],
		massUg: 1200 + 37 * i,
		expandedUg: 1.633,
		date: '2031-04-12',
		holder: i % 2 ? 'Fennick Organics Lab' : 'Brightwater Curation Facility',
		mark: i % 3 === 0 ? { text: 'N₂ only · no air' } : null
	});
	function* labels() {
		for (let i = 0; i < N; i++) yield label(i);
	}
	let bytes = 0;
	const sink = () => new Writable({ write(c, _e, cb) { bytes += c.length; cb(); } });
	const t0 = process.hrtime.bigint();
	if (variant === 'single') {
		for (let i = 0; i < N; i++) await pipeline(renderLabels([label(i)], { format: 'a4', origin: ORIGIN }), sink());
	} else {
		await pipeline(renderLabels(labels(), { format: 'a4', origin: ORIGIN, rasterQr: variant === 'raster' }), sink());
	}
	const ms = Number(process.hrtime.bigint() - t0) / 1e6;
	process.stdout.write(JSON.stringify({ ms, maxRssKiB: process.resourceUsage().maxRSS, heapUsedMiB: process.memoryUsage().heapUsed / 2 ** 20, bytes }));
}

async function main() {
	const variant = process.argv[2];
	if (variant) return child(variant);
	const self = fileURLToPath(import.meta.url);
	// a warm-up so that the first variant does not pay for the module cache alone
	spawnSync(process.execPath, ['--import', 'tsx', self, 'vector'], { encoding: 'utf8' });
	const results: Record<string, { ms: number; maxRssKiB: number; heapUsedMiB: number; bytes: number }> = {};
	for (const v of ['vector', 'raster', 'single']) {
		const r = spawnSync(process.execPath, ['--import', 'tsx', self, v], { encoding: 'utf8' });
		if (r.status !== 0) throw new Error(`${v} failed:\n${r.stderr}`);
		results[v] = JSON.parse(r.stdout);
	}
	// the cost of starting Node with tsx and loading the modules, to subtract from peak RSS
	const base = spawnSync(process.execPath, ['--import', 'tsx', '-e', 'import("./src/lib/server/labels/render").then(()=>process.stdout.write(String(process.resourceUsage().maxRSS)))'], { encoding: 'utf8' });
	const baseKiB = Number(base.stdout);
	const v = results.vector;
	console.log(`labels: ${N} on A4 sheets (30 a sheet, ${Math.ceil(N / 30)} sheets), Node ${process.version}`);
	console.log('variant  wall ms   peak RSS MiB  (over idle)  output KiB   time ×vector  RSS ×vector  size ×vector');
	for (const [name, r] of Object.entries(results)) {
		console.log(
			[
				name.padEnd(8),
				r.ms.toFixed(0).padStart(7),
				(r.maxRssKiB / 1024).toFixed(1).padStart(13),
				((r.maxRssKiB - baseKiB) / 1024).toFixed(1).padStart(12),
				(r.bytes / 1024).toFixed(0).padStart(11),
				(r.ms / v.ms).toFixed(2).padStart(14),
				(r.maxRssKiB / v.maxRssKiB).toFixed(2).padStart(12),
				(r.bytes / v.bytes).toFixed(2).padStart(13)
			].join(' ')
		);
	}
	console.log(`idle RSS (Node + tsx + renderer loaded): ${(baseKiB / 1024).toFixed(1)} MiB`);
	console.log('single = one label per PDF, 500 PDFs; its size is the sum of 500 files, each with its own fonts.');
}

main().catch((e) => {
	console.error(e);
	process.exit(1);
});
