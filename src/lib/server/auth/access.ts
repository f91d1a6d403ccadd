import type { Role } from './types';

/**
 * Who may reach each route: the one place where access is decided. The hook in
 * hooks.server.ts looks up every request's route id here, so a route without an entry is refused
 * to everybody (deny by default), and the authorization matrix test fails for it.
 *
 * 'public' — anybody, signed in or not; 'signed-in' — any active account; otherwise a list of roles.
 * A rule may differ per HTTP method; `*` is the fallback for methods not named.
 */
export type Audience = 'public' | 'signed-in' | readonly Role[];
export type Rule = Partial<Record<'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE' | '*', Audience>>;

export const STAFF = ['admin', 'curator', 'auditor'] as const satisfies readonly Role[];
export const CURATORS = ['curator', 'admin'] as const satisfies readonly Role[];
export const ADMINS = ['admin'] as const satisfies readonly Role[];
export const AUDITORS = ['auditor', 'admin'] as const satisfies readonly Role[];
/** who may upload documents and blank-control reports: everybody but the read-only auditor */
export const UPLOADERS = ['admin', 'curator', 'lab_member'] as const satisfies readonly Role[];

export const ACCESS: Record<string, Rule> = {
	'/': { '*': 'public' },
	'/sign-in': { '*': 'public' },
	'/sign-out': { GET: 'public', POST: 'public' },
	'/invite/[token]': { '*': 'public' },
	'/reset': { '*': 'public' },
	'/reset/[token]': { '*': 'public' },
	'/account': { '*': 'signed-in' },
	'/admin/users': { '*': ADMINS },
	'/admin/labs': { '*': ADMINS },
	'/api/health': { GET: 'public' },
	'/api/auth/sign-in': { POST: 'public' },
	'/api/auth/sign-out': { POST: 'signed-in' },
	'/api/me': { GET: 'signed-in' },
	'/api/tokens': { GET: 'signed-in', POST: 'signed-in' },
	'/api/tokens/[id]': { DELETE: 'signed-in' },
	'/api/labs': { GET: 'signed-in', POST: ADMINS },
	'/api/labs/[id]': { GET: 'signed-in' },
	'/api/users': { GET: ADMINS, POST: ADMINS },
	'/api/users/[id]': { GET: ADMINS, PATCH: ADMINS },
	// registry
	'/collections': { GET: STAFF, POST: ADMINS },
	'/items': { GET: 'signed-in' },
	'/items/new': { GET: CURATORS, POST: CURATORS },
	'/items/import': { GET: CURATORS },
	'/items/[code]': { GET: 'signed-in' },
	'/items/[code]/split': { GET: CURATORS, POST: CURATORS },
	'/balances': { GET: STAFF, POST: ADMINS },
	'/api/collections': { GET: STAFF },
	'/api/collections/[prefix]': { PATCH: ADMINS },
	'/api/balances': { GET: STAFF, POST: ADMINS },
	'/api/balances/[id]': { PATCH: ADMINS },
	'/api/items': { GET: 'signed-in', POST: CURATORS },
	'/api/items/export': { GET: 'signed-in' },
	'/api/items/import': { POST: CURATORS },
	'/api/items/import/template': { GET: CURATORS },
	'/api/items/[code]': { GET: 'signed-in' },
	'/api/items/[code]/splits': { POST: CURATORS },
	'/api/items/[code]/lineage': { GET: 'signed-in' },
	'/api/items/[code]/ledger': { GET: 'signed-in' },
	// custody: allocation requests, transfers, signatures, usage reports
	'/requests': { GET: 'signed-in' },
	'/requests/new': { GET: ['lab_member'], POST: ['lab_member'] },
	'/requests/[id]': { GET: 'signed-in', POST: ['lab_member', 'curator', 'admin'] },
	'/transfers': { GET: 'signed-in' },
	'/transfers/new': { GET: ['curator', 'admin', 'lab_member'], POST: ['curator', 'admin', 'lab_member'] },
	'/transfers/[id]': { GET: 'signed-in', POST: ['lab_member', 'curator', 'admin'] },
	'/api/requests': { GET: 'signed-in', POST: ['lab_member'] },
	'/api/requests/[id]': { GET: 'signed-in', PUT: ['lab_member'] },
	'/api/requests/[id]/submit': { POST: ['lab_member'] },
	'/api/requests/[id]/withdraw': { POST: ['lab_member'] },
	'/api/requests/[id]/review': { POST: CURATORS },
	'/api/requests/[id]/grant': { POST: CURATORS },
	'/api/requests/[id]/decline': { POST: CURATORS },
	'/api/requests/[id]/earmark': { POST: CURATORS },
	'/api/requests/[id]/plans': { GET: CURATORS },
	// material on offer: everyone who may ask for material, and the staff who review it
	'/offer': { GET: ['lab_member', 'curator', 'admin', 'auditor'] },
	'/api/offer': { GET: ['lab_member', 'curator', 'admin', 'auditor'] },
	'/api/requests/[id]/usage': { POST: ['lab_member'] },
	'/api/transfers': { GET: 'signed-in', POST: ['curator', 'admin', 'lab_member'] },
	'/api/transfers/[id]': { GET: 'signed-in' },
	'/api/transfers/[id]/sign': { POST: ['curator', 'admin', 'lab_member'] },
	'/api/transfers/[id]/cancel': { POST: ['curator', 'admin', 'lab_member'] },
	'/api/transfers/[id]/receipt': { GET: 'signed-in' },
	// trail
	'/api/trail/verify': { GET: AUDITORS },
	'/api/trail/events': { GET: AUDITORS },
	'/api/trail/keys': { GET: AUDITORS, POST: ADMINS },
	'/api/trail/checkpoints': { GET: AUDITORS },
	'/api/trail/export': { GET: AUDITORS },
	'/audit/trail': { GET: AUDITORS },
	// the offline verifier holds no data: anybody may load it, and it sends nothing anywhere
	'/audit/trail/offline': { GET: 'public' },
	// labels
	'/scan': { GET: 'signed-in' },
	'/labels': { GET: 'signed-in' },
	'/api/items/[code]/label': { GET: 'signed-in' },
	'/api/labels': { POST: 'signed-in' },
	'/api/scan/[code]': { GET: 'signed-in' },
	// documents
	'/reports': { GET: 'signed-in' },
	'/reports/new': { GET: UPLOADERS },
	'/reports/[id]': { GET: 'signed-in' },
	'/api/documents': { GET: 'signed-in', POST: UPLOADERS },
	'/api/documents/[id]': { GET: 'signed-in' },
	'/api/documents/[id]/file': { GET: 'signed-in' },
	'/api/blank-control-reports': { GET: 'signed-in', POST: UPLOADERS },
	'/api/blank-control-reports/template': { GET: 'signed-in' },
	'/api/blank-control-reports/[id]': { GET: 'signed-in' },
	'/api/blank-control-reports/[id]/pdf': { GET: 'signed-in' },
	// handling
	'/handling': { GET: STAFF },
	'/handling/new': { GET: CURATORS, POST: CURATORS },
	'/audit/items/[code]': { GET: STAFF },
	'/api/handling-sessions': { GET: STAFF, POST: CURATORS },
	'/api/handling-sessions/[id]': { GET: 'signed-in' },
	'/api/items/[code]/exposure': { GET: 'signed-in' },
	'/api/items/[code]/history': { GET: STAFF },
	'/api/splits/[id]/handling-session': { POST: CURATORS }
};

export function audienceFor(routeId: string | null, method: string): Audience | null {
	if (!routeId) return null;
	const rule = ACCESS[routeId];
	if (!rule) return null;
	const m = method.toUpperCase() === 'HEAD' ? 'GET' : method.toUpperCase();
	return rule[m as keyof Rule] ?? rule['*'] ?? null;
}

export type Decision = 'allow' | 'unauthenticated' | 'forbidden' | 'unknown-route';

export function decide(routeId: string | null, method: string, role: Role | null): Decision {
	const audience = audienceFor(routeId, method);
	if (audience === null) return 'unknown-route';
	if (audience === 'public') return 'allow';
	if (!role) return 'unauthenticated';
	if (audience === 'signed-in') return 'allow';
	return audience.includes(role) ? 'allow' : 'forbidden';
}

export function hasRole(role: Role | null | undefined, roles: readonly Role[]): boolean {
	return !!role && roles.includes(role);
}
