import type { RequestEvent } from '@sveltejs/kit';

/** The client address and agent of a request, for throttling and the session record. */
export function clientMeta(event: RequestEvent): { ip: string; userAgent: string } {
	let ip = 'unknown';
	try {
		ip = event.getClientAddress();
	} catch {
		/* not available in every adapter */
	}
	return { ip: ip.slice(0, 64), userAgent: (event.request.headers.get('user-agent') ?? '').slice(0, 300) };
}

/** Only same-site relative paths are followed after sign-in. */
export function safeNext(next: string | null): string {
	if (!next || !next.startsWith('/') || next.startsWith('//') || next.startsWith('/\\')) return '/';
	return next;
}
