import type { Role } from './server/auth/types';

export interface NavItem {
	href: string;
	label: string;
}

const L = {
	work: { href: '/', label: 'Worklist' },
	collections: { href: '/collections', label: 'Collections' },
	items: { href: '/items', label: 'Items' },
	handling: { href: '/handling', label: 'Handling' },
	offer: { href: '/offer', label: 'On offer' },
	requests: { href: '/requests', label: 'Requests' },
	transfers: { href: '/transfers', label: 'Transfers' },
	reports: { href: '/reports', label: 'Blank reports' },
	scan: { href: '/scan', label: 'Scan' },
	balances: { href: '/balances', label: 'Balances' },
	admin: { href: '/admin/users', label: 'Admin' },
	trail: { href: '/audit/trail', label: 'Trail' },
	account: { href: '/account', label: 'Account' }
} satisfies Record<string, NavItem>;

/** The main navigation each role sees. */
export function navFor(role: Role | null): NavItem[] {
	switch (role) {
		case null:
			return [{ href: '/', label: 'Overview' }];
		case 'curator':
			return [L.work, L.collections, L.items, L.offer, L.handling, L.requests, L.transfers, L.reports, L.balances, L.scan, L.account];
		case 'lab_member':
			return [L.work, L.offer, L.requests, L.transfers, { href: '/items', label: 'Our material' }, L.reports, L.scan, L.account];
		case 'auditor':
			return [{ href: '/', label: 'Overview' }, L.collections, L.items, L.offer, L.handling, L.requests, L.transfers, L.reports, L.trail, L.scan, L.account];
		case 'admin':
			return [L.work, L.collections, L.items, L.offer, L.handling, L.requests, L.transfers, L.reports, L.balances, L.trail, L.admin, L.account];
	}
}
