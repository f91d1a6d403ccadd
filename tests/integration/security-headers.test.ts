import { describe, it, expect } from 'vitest';
import { BASE, signedIn, DEMO } from '../helpers/http';

/** The headers every answer carries: a Content Security Policy, no sniffing, no framing, a narrow referrer. */
function directives(csp: string | null): Map<string, string[]> {
	const m = new Map<string, string[]>();
	for (const part of (csp ?? '').split(';')) {
		const [name, ...values] = part.trim().split(/\s+/);
		if (name) m.set(name, values);
	}
	return m;
}

function common(h: Headers) {
	expect(h.get('x-content-type-options')).toBe('nosniff');
	expect(h.get('x-frame-options')).toBe('DENY');
	expect(h.get('referrer-policy')).toBe('same-origin');
	const d = directives(h.get('content-security-policy'));
	expect(d.get('frame-ancestors')).toEqual(["'none'"]);
	return d;
}

describe('security headers', () => {
	it('a page has a nonce-based script policy with no inline scripts or styles allowed', async () => {
		const c = await signedIn(DEMO.curator);
		const res = await fetch(`${BASE}/items`, { headers: { cookie: c.cookie! } });
		expect(res.status).toBe(200);
		const d = common(res.headers);
		const scripts = d.get('script-src')!;
		expect(scripts).toContain("'self'");
		const nonce = scripts.find((s) => s.startsWith("'nonce-"));
		expect(nonce).toBeDefined();
		expect(scripts).not.toContain("'unsafe-inline'");
		expect(scripts).not.toContain("'unsafe-eval'");
		expect(d.get('style-src')).not.toContain("'unsafe-inline'");
		expect(d.get('object-src')).toEqual(["'none'"]);
		expect(d.get('default-src')).toEqual(["'self'"]);
		// every inline script of the page carries this response's nonce
		const html = await res.text();
		const inline = [...html.matchAll(/<script(?![^>]*\bsrc=)([^>]*)>/g)].map((m) => m[1]);
		expect(inline.length).toBeGreaterThan(0);
		for (const attrs of inline) expect(attrs).toContain(`nonce="${nonce!.slice(7, -1)}"`);
		expect(html).not.toMatch(/\sstyle="/);
		// a fresh nonce on each answer
		const again = await fetch(`${BASE}/items`, { headers: { cookie: c.cookie! } });
		expect(directives(again.headers.get('content-security-policy')).get('script-src')).not.toContain(nonce);
	});

	it('the sign-in page, signed out, has the same protections', async () => {
		const res = await fetch(`${BASE}/sign-in`);
		expect(res.status).toBe(200);
		expect(common(res.headers).get('script-src')!.some((s) => s.startsWith("'nonce-"))).toBe(true);
	});

	it('an API answer and an API refusal may load nothing and cannot be framed', async () => {
		for (const [path, status] of [['/api/health', 200], ['/api/me', 401], ['/api/no-such-route', 404]] as const) {
			const res = await fetch(`${BASE}${path}`);
			expect(res.status, path).toBe(status);
			const d = common(res.headers);
			expect(d.get('default-src'), path).toEqual(["'none'"]);
			expect(res.headers.get('content-type'), path).toContain('application/json');
		}
	});
});
