import { json, type RequestEvent } from '@sveltejs/kit';
import type { ZodType } from 'zod';

/** A failure that the JSON API reports as `{ "error": { "code", "message", "fields"? } }`. */
export class ApiProblem extends Error {
	constructor(
		public status: number,
		public code: string,
		message: string,
		public fields?: Record<string, string>,
		public extra?: Record<string, unknown>
	) {
		super(message);
	}
}

export function problemResponse(p: ApiProblem): Response {
	return json(
		{ error: { code: p.code, message: p.message, ...(p.fields ? { fields: p.fields } : {}), ...(p.extra ?? {}) } },
		{ status: p.status }
	);
}

export function errorResponse(status: number, code: string, message: string, fields?: Record<string, string>) {
	return problemResponse(new ApiProblem(status, code, message, fields));
}

/**
 * Turns zod issues into one message per field path ("children.2.massUg"); a key that is not part of
 * the input is named itself ("maxMinutes.plasma: is not a known field").
 */
export function zodFields(issues: { path: PropertyKey[]; message: string; code?: string; keys?: string[] }[]): Record<string, string> {
	// A Map, not an object: a key such as "valueOf" or "__proto__" is the input's own word, never
	// something the object already inherits.
	const fields = new Map<string, string>();
	const put = (key: string, message: string) => {
		if (!fields.has(key)) fields.set(key, message);
	};
	for (const i of issues) {
		if (i.code === 'unrecognized_keys' && i.keys?.length) {
			for (const k of i.keys) put([...i.path.map(String), k].join('.'), 'is not a known field');
			continue;
		}
		put(i.path.map(String).join('.') || '(body)', i.message);
	}
	return Object.fromEntries(fields);
}

/** The first field's message, for the one-line summary of a 4xx answer. */
function firstField(fields: Record<string, string>): string {
	const first = Object.entries(fields)[0];
	return first ? `${first[0]}: ${first[1]}` : 'the input does not match what this route takes';
}

const MAX_JSON_BYTES = 1_000_000;

/** Reads and validates a JSON body; every failure is a 4xx ApiProblem naming what is wrong. */
export async function readJson<T>(event: RequestEvent, schema: ZodType<T>): Promise<T> {
	const type = event.request.headers.get('content-type') ?? '';
	if (!type.toLowerCase().startsWith('application/json')) {
		throw new ApiProblem(415, 'unsupported_media_type', 'Send the body as JSON with Content-Type: application/json.');
	}
	const text = await event.request.text();
	if (text.length > MAX_JSON_BYTES) throw new ApiProblem(413, 'too_large', `The body is larger than ${MAX_JSON_BYTES} bytes.`);
	let raw: unknown;
	try {
		raw = JSON.parse(text);
	} catch {
		throw new ApiProblem(400, 'invalid_json', 'The body is not valid JSON.');
	}
	const r = schema.safeParse(raw);
	if (!r.success) {
		const fields = zodFields(r.error.issues);
		throw new ApiProblem(422, 'invalid_input', `Invalid input: ${firstField(fields)}`, fields);
	}
	return r.data;
}

/** Validates query parameters with a zod schema of strings. */
export function readQuery<T>(url: URL, schema: ZodType<T>): T {
	// fromEntries makes every name an own key (the last of a repeated name wins), "__proto__" included.
	const raw: Record<string, string> = Object.fromEntries(url.searchParams);
	const r = schema.safeParse(raw);
	if (!r.success) {
		const fields = zodFields(r.error.issues);
		throw new ApiProblem(400, 'invalid_query', `Invalid query: ${firstField(fields)}`, fields);
	}
	return r.data;
}

/** Recognises the errors of an unreachable database, which the API answers with 503. */
export function isDbUnavailable(e: unknown): boolean {
	const err = e as { name?: string; message?: string; parent?: { code?: string; message?: string }; original?: { code?: string } };
	const name = err?.name ?? '';
	if (/^Sequelize(Connection|ConnectionRefused|ConnectionAcquireTimeout|HostNotReachable|ConnectionTimedOut)Error$/.test(name)) return true;
	// A query cut off by a database restart: the server ended the session (57P01–57P03, class 08),
	// or the socket closed under the driver.
	const code = err?.parent?.code ?? err?.original?.code ?? (err as { code?: string })?.code ?? '';
	if (/^(57P0[1-3]|08\d\d\d|ECONNRESET|ECONNREFUSED|EPIPE)$/.test(code)) return true;
	const message = err?.parent?.message ?? err?.message ?? '';
	return /Connection terminated|connection is closed|Client has encountered a connection error|the database system is (starting up|shutting down)/i.test(message);
}

type Handler<E extends RequestEvent> = (event: E) => Response | Promise<Response>;

/** Wraps a JSON endpoint so an ApiProblem becomes its documented error response. */
export function endpoint<E extends RequestEvent>(fn: Handler<E>): Handler<E> {
	return async (event) => {
		try {
			return await fn(event);
		} catch (e) {
			if (e instanceof ApiProblem) return problemResponse(e);
			if (isDbUnavailable(e)) return errorResponse(503, 'unavailable', 'The database is not reachable at the moment; try again shortly.');
			throw e;
		}
	};
}

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** A path id that is not a well-formed UUID names nothing: 404, never a database error. */
export function pathId(id: string, what = 'record'): string {
	if (!UUID.test(id)) throw new ApiProblem(404, 'not_found', `No such ${what}.`);
	return id.toLowerCase();
}
