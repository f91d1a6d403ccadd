import { error, redirect, type Handle, type HandleServerError, type ServerInit } from '@sveltejs/kit';
import { building } from '$app/environment';
import { outboxJob } from '$lib/server/outbox';
import { remindOverdueUsage } from '$lib/server/custody/usage';
import { documentCleanupJob } from '$lib/server/documents/cleanup';
import { startJobs } from '$lib/server/jobs';
import { checkpointJob } from '$lib/server/trail/checkpoints';
import { randomUUID } from 'node:crypto';
import { lucia } from '$lib/server/auth/lucia';
import { decide } from '$lib/server/auth/access';
import { userIdForBearer } from '$lib/server/auth/tokens';
import { errorResponse, isDbUnavailable } from '$lib/server/api';
import { ROLE_LABELS, type SessionUser } from '$lib/server/auth/types';
import { User, Lab, models } from '$lib/server/models';
import { countQueries, queryCount } from '$lib/server/db';

const STATUS_CODES: Record<number, string> = {
	400: 'bad_request', 401: 'unauthenticated', 403: 'forbidden', 404: 'not_found', 405: 'method_not_allowed',
	409: 'conflict', 413: 'too_large', 415: 'unsupported_media_type', 422: 'invalid_input', 429: 'throttled',
	500: 'internal', 503: 'unavailable'
};

function toSessionUser(u: { id: string; email: string; name: string; role: SessionUser['role']; labId: string | null; labName: string | null }): SessionUser {
	return { id: u.id, email: u.email, name: u.name, role: u.role, roleLabel: ROLE_LABELS[u.role], labId: u.labId, labName: u.labName };
}

async function authenticate(event: Parameters<Handle>[0]['event']) {
	event.locals.user = null;
	event.locals.session = null;
	const auth = event.request.headers.get('authorization');
	if (auth && /^Bearer\s+/i.test(auth)) {
		const found = await userIdForBearer(auth.replace(/^Bearer\s+/i, '').trim());
		if (!found) return 'bad-token' as const;
		models();
		const u = await User.findByPk(found.userId, { include: [{ model: Lab, as: 'lab' }] });
		if (!u || !u.active) return 'bad-token' as const;
		event.locals.user = toSessionUser({ ...u.get(), labName: u.lab?.name ?? null });
		event.locals.session = { id: found.tokenId, expiresAt: new Date(8.64e15), viaToken: true };
		return 'ok' as const;
	}
	const l = lucia();
	const sessionId = event.cookies.get(l.sessionCookieName);
	if (!sessionId) return 'none' as const;
	const { session, user } = await l.validateSession(sessionId);
	if (session && user && !user.active) {
		// A deactivated account's open session ends at its next request.
		await l.invalidateUserSessions(user.id);
	}
	if (!session || !user || !user.active) {
		const blank = l.createBlankSessionCookie();
		event.cookies.set(blank.name, blank.value, { path: '.', ...blank.attributes });
		return 'none' as const;
	}
	if (session.fresh) {
		const c = l.createSessionCookie(session.id);
		event.cookies.set(c.name, c.value, { path: '.', ...c.attributes });
	}
	event.locals.user = toSessionUser(user);
	event.locals.session = { id: session.id, expiresAt: session.expiresAt, viaToken: false };
	return 'ok' as const;
}

const securityHeaders: Record<string, string> = {
	'x-content-type-options': 'nosniff',
	'referrer-policy': 'same-origin',
	'x-frame-options': 'DENY',
	'permissions-policy': 'camera=(self), microphone=(), geolocation=()'
};
/** Pages get SvelteKit's nonce policy (svelte.config.js); everything else, JSON and files, may load nothing. */
const NON_PAGE_CSP = "default-src 'none'; frame-ancestors 'none'; base-uri 'none'; form-action 'none'";

function withSecurityHeaders(response: Response): Response {
	for (const [k, v] of Object.entries(securityHeaders)) if (!response.headers.has(k)) response.headers.set(k, v);
	if (!response.headers.has('content-security-policy')) response.headers.set('content-security-policy', NON_PAGE_CSP);
	return response;
}

/** Gives every JSON API failure the documented shape, whoever produced it. */
async function normaliseApiError(res: Response): Promise<Response> {
	if (res.status < 400) return res;
	const type = res.headers.get('content-type') ?? '';
	const text = await res.clone().text();
	if (type.includes('application/json')) {
		try {
			const body = JSON.parse(text);
			if (body && typeof body === 'object' && body.error && typeof body.error.code === 'string') return res;
		} catch {
			/* fall through */
		}
	}
	const message = (() => {
		try {
			return JSON.parse(text).message ?? text;
		} catch {
			return text || `HTTP ${res.status}`;
		}
	})();
	const out = errorResponse(res.status, STATUS_CODES[res.status] ?? 'error', String(message).slice(0, 300));
	for (const h of ['allow', 'retry-after']) if (res.headers.get(h)) out.headers.set(h, res.headers.get(h)!);
	return out;
}

export const handle: Handle = async (input) => {
	if (!countQueries) return guarded(input);
	const counter = { n: 0 };
	const response = await queryCount.run(counter, () => guarded(input));
	response.headers.set('x-regolog-queries', String(counter.n));
	return response;
};

const guarded: Handle = async ({ event, resolve }) => {
	const isApi = event.url.pathname === '/api' || event.url.pathname.startsWith('/api/');
	let status: Awaited<ReturnType<typeof authenticate>>;
	try {
		status = await authenticate(event);
	} catch (e) {
		if (!isDbUnavailable(e)) throw e;
		const down = errorResponse(503, 'unavailable', 'The database is not reachable at the moment; try again shortly.');
		down.headers.set('retry-after', '5');
		return withSecurityHeaders(down);
	}

	let response: Response;
	if (isApi && status === 'bad-token') {
		response = errorResponse(401, 'unauthenticated', 'The API token is unknown, revoked or expired.');
	} else {
		const decision = event.route.id ? decide(event.route.id, event.request.method, event.locals.user?.role ?? null) : 'allow';
		if (decision === 'unknown-route') {
			response = isApi
				? errorResponse(405, 'method_not_allowed', `${event.request.method} is not allowed on ${event.url.pathname}.`)
				: error(404, { code: 'not_found', message: 'Not found' });
		} else if (decision === 'unauthenticated') {
			if (!isApi && event.request.method === 'GET') {
				redirect(303, `/sign-in?next=${encodeURIComponent(event.url.pathname + event.url.search)}`);
			}
			response = errorResponse(401, 'unauthenticated', 'Sign in first: this needs an account.');
		} else if (decision === 'forbidden') {
			response = isApi
				? errorResponse(403, 'forbidden', `Your role (${event.locals.user!.roleLabel}) may not do this.`)
				: error(403, { code: 'forbidden', message: `Your role (${event.locals.user!.roleLabel}) may not open this page.` });
		} else {
			response = await resolve(event);
			if (response.status === 500 && event.locals.dbUnavailable) {
				// A page or endpoint that failed only because the database went away: 503, try again.
				response = new Response(response.body, { status: 503, headers: response.headers });
				response.headers.set('retry-after', '5');
			}
			if (isApi) response = await normaliseApiError(response);
		}
	}
	withSecurityHeaders(response);
	if (event.locals.user) response.headers.set('cache-control', 'private, no-store');
	return response;
};

export const handleError: HandleServerError = ({ error, event, status }) => {
	if (status === 404) return { message: 'Not found', code: 'not_found' };
	// A refusal raised by the framework itself (an oversized body: 413) is the client's, not ours.
	if (status >= 400 && status < 500) return { message: (error as Error)?.message?.slice(0, 300) || `HTTP ${status}`, code: STATUS_CODES[status] ?? 'bad_request' };
	const ref = randomUUID().slice(0, 8);
	console.error(`[regolog] error ${ref} on ${event.request.method} ${event.url.pathname}:`, error);
	if (isDbUnavailable(error)) {
		event.locals.dbUnavailable = true;
		return { message: 'The database is not reachable at the moment; try again shortly.', code: 'unavailable' };
	}
	return { message: `Something went wrong on our side (reference ${ref}); nothing was changed by the failed step.`, code: 'internal' };
};

export const init: ServerInit = async () => {
	// Background jobs, each on one instance at a time however many serve the database (jobs.ts): the
	// mail outbox drained every few seconds (a mail outage only delays delivery), overdue usage
	// reports reminded once (checked hourly), and objects left in the bucket without a record (a
	// failed save) removed after a grace period.
	if (!building) {
		startJobs([
			outboxJob,
			{ name: 'usage-reminders', everyMs: 3600_000, firstAfterMs: 10_000, shared: true, run: () => remindOverdueUsage(models()) },
			documentCleanupJob(models),
			// signed checkpoints of the trail's head: at start-up, every 1,000 events, at least hourly
			checkpointJob(models)
		]);
	}
};
