import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, sep } from 'node:path';

export interface FoundRoute {
	id: string;
	methods: string[];
}

/** Every route under src/routes with the HTTP methods it answers (pages: GET, and POST when they have actions). */
export function walkRoutes(root = join(process.cwd(), 'src', 'routes')): FoundRoute[] {
	const out: FoundRoute[] = [];
	const visit = (dir: string) => {
		const files = readdirSync(dir);
		const methods = new Set<string>();
		if (files.includes('+page.svelte')) methods.add('GET');
		if (files.includes('+page.server.ts') && /export\s+const\s+actions\b/.test(readFileSync(join(dir, '+page.server.ts'), 'utf8'))) methods.add('POST');
		if (files.includes('+server.ts')) {
			const src = readFileSync(join(dir, '+server.ts'), 'utf8');
			for (const m of src.matchAll(/export\s+(?:const|async\s+function|function)\s+(GET|POST|PUT|PATCH|DELETE)\b/g)) methods.add(m[1]);
		}
		if (methods.size) {
			const rel = relative(root, dir).split(sep).join('/');
			out.push({ id: '/' + rel, methods: [...methods].sort() });
		}
		for (const f of files) if (statSync(join(dir, f)).isDirectory()) visit(join(dir, f));
	};
	visit(root);
	return out.map((r) => ({ ...r, id: r.id === '/' ? '/' : r.id.replace(/\/$/, '') })).sort((a, b) => a.id.localeCompare(b.id));
}
