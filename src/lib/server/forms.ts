import { fail } from '@sveltejs/kit';
import type { ZodType } from 'zod';
import { ApiProblem, zodFields } from './api';

export type FormFailure = { values: Record<string, string>; fields: Record<string, string>; message: string | null };

/** Form data as a plain object of strings (the last value of a repeated name wins). */
export function formValues(data: FormData): Record<string, string> {
	const entries: [string, string][] = [];
	for (const [k, v] of data) if (typeof v === 'string') entries.push([k, v]);
	return Object.fromEntries(entries);
}

/** Validates a form with zod; on failure returns SvelteKit's fail() with messages per field. */
export function parseForm<T>(values: Record<string, unknown>, schema: ZodType<T>) {
	const r = schema.safeParse(values);
	if (r.success) return { ok: true as const, data: r.data };
	const fields = zodFields(r.error.issues);
	return {
		ok: false as const,
		failure: fail(400, { values: stringify(values), fields, message: 'Please correct the fields marked below.' } satisfies FormFailure)
	};
}

function stringify(values: Record<string, unknown>): Record<string, string> {
	const out: Record<string, string> = {};
	for (const [k, v] of Object.entries(values)) if (!/password|confirm|current/.test(k)) out[k] = v == null ? '' : String(v);
	return out;
}

/** Runs a service call for a form action, turning an ApiProblem into fail() beside the fields. */
export async function formAction<T>(values: Record<string, unknown>, run: () => Promise<T>) {
	try {
		return { ok: true as const, value: await run() };
	} catch (e) {
		if (e instanceof ApiProblem) {
			return {
				ok: false as const,
				failure: fail(e.status, { values: stringify(values), fields: e.fields ?? {}, message: e.message } satisfies FormFailure)
			};
		}
		throw e;
	}
}
