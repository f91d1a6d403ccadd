import { describe, it, expect } from 'vitest';
import { existsSync, readFileSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';

/** The rows of the table under "## Map of the code" in DEVELOPERS.md, each cell's backticked paths. */
function mapRows(): { area: string; routes: string[]; services: string[]; domain: string[] }[] {
	const text = readFileSync('DEVELOPERS.md', 'utf8');
	const start = text.indexOf('\n## Map of the code');
	if (start < 0) throw new Error('DEVELOPERS.md has no "## Map of the code" section');
	const next = text.indexOf('\n## ', start + 1);
	const section = text.slice(start, next < 0 ? undefined : next);
	const lines = section.split('\n').filter((l) => l.startsWith('|'));
	const [header, rule, ...rows] = lines;
	expect(header).toMatch(/area.*routes.*services.*domain/);
	expect(rule).toMatch(/^\|\s*-+/);
	const paths = (cell: string) => [...cell.matchAll(/`([^`]+)`/g)].map((m) => m[1]);
	return rows.map((l) => {
		const cells = l.split('|').slice(1, -1).map((c) => c.trim());
		expect(cells, l).toHaveLength(4);
		return { area: cells[0], routes: paths(cells[1]), services: paths(cells[2]), domain: paths(cells[3]) };
	});
}

describe('the map of the code in DEVELOPERS.md', () => {
	const rows = mapRows();

	it('has a row per area, each naming its routes or services', () => {
		expect(rows.length).toBeGreaterThan(10);
		for (const r of rows) expect(r.routes.length + r.services.length, r.area).toBeGreaterThan(0);
	});

	it('names only paths that exist, each in the column it belongs to', () => {
		const missing: string[] = [];
		for (const r of rows) {
			for (const p of [...r.routes, ...r.services, ...r.domain]) if (!existsSync(p)) missing.push(`${r.area}: ${p}`);
			for (const p of r.routes) expect(p, r.area).toMatch(/^src\/(routes\/|hooks\.server\.ts$)/);
			for (const p of r.services) expect(p, r.area).toMatch(/^src\/lib\/server\/.+\.ts$/);
			for (const p of r.domain) expect(p, r.area).toMatch(/^src\/lib\/domain\/.+\.ts$/);
		}
		expect(missing).toEqual([]);
	});

	it('covers every folder directly under src/routes and src/routes/api', () => {
		const named = new Set(rows.flatMap((r) => r.routes));
		const folders = (dir: string) => readdirSync(dir).map((f) => join(dir, f)).filter((p) => statSync(p).isDirectory());
		const unmapped = [...folders('src/routes').filter((p) => p !== 'src/routes/api'), ...folders('src/routes/api')].filter((p) => !named.has(p));
		expect(unmapped).toEqual([]);
	});
});
