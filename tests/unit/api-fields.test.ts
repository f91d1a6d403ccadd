import { describe, it, expect } from 'vitest';
import { z } from 'zod';
import { zodFields, readQuery, ApiProblem } from '../../src/lib/server/api';

// Names every plain object inherits; a query or body may use any of them as its own key.
const INHERITED = ['__proto__', 'constructor', 'valueOf', 'toString', 'hasOwnProperty', 'isPrototypeOf'];

describe('field messages of refused input', () => {
	it('names an unknown key itself, even one a plain object inherits', () => {
		const schema = z.strictObject({ q: z.string().optional() });
		for (const k of INHERITED) {
			const r = schema.safeParse(JSON.parse(`{"${k}":"x"}`));
			expect(r.success, k).toBe(false);
			const fields = zodFields(r.error!.issues);
			expect(Object.keys(fields), k).toEqual([k]);
			expect(Object.getOwnPropertyDescriptor(fields, k)?.value, k).toBe('is not a known field');
		}
	});

	it('keeps the first message of each path and names the body when there is no path', () => {
		const fields = zodFields([
			{ path: ['children', 2, 'massUg'], message: 'too small' },
			{ path: ['children', 2, 'massUg'], message: 'second' },
			{ path: [], message: 'Expected object' }
		]);
		expect(fields).toEqual({ 'children.2.massUg': 'too small', '(body)': 'Expected object' });
	});

	it('refuses a query with an inherited name as a 400 that names it', () => {
		const schema = z.strictObject({ q: z.string().optional() });
		for (const k of INHERITED) {
			let problem: unknown;
			try {
				readQuery(new URL(`http://x/?${encodeURIComponent(k)}=1`), schema);
			} catch (e) {
				problem = e;
			}
			expect(problem, k).toBeInstanceOf(ApiProblem);
			expect((problem as ApiProblem).status, k).toBe(400);
			expect((problem as ApiProblem).message, k).toBe(`Invalid query: ${k}: is not a known field`);
		}
	});

	it('reads the last of a repeated query name', () => {
		expect(readQuery(new URL('http://x/?q=a&q=b'), z.strictObject({ q: z.string() }))).toEqual({ q: 'b' });
	});
});
