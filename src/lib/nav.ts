import type { Role } from './server/auth/types';

export interface NavItem {
	href: string;
	label: string;
}

/** The main navigation each role sees. */
export function navFor(role: Role | null): NavItem[] {
	if (!role) return [{ href: '/', label: 'Overview' }];
	const common: NavItem[] = [
		{ href: '/', label: 'Worklist' },
		{ href: '/collections', label: 'Collections' },
		{ href: '/items', label: 'Items' },
		{ href: '/scan', label: 'Scan' }
	];
	switch (role) {
		case 'curator':
			return [...common, { href: '/handling', label: 'Handling' }, { href: '/balances', label: 'Balances' }, { href: '/account', label: 'Account' }];
		case 'lab_member':
			return [{ href: '/', label: 'Worklist' }, { href: '/items', label: 'Our material' }, { href: '/scan', label: 'Scan' }, { href: '/account', label: 'Account' }];
		case 'auditor':
			return [...common, { href: '/handling', label: 'Handling' }, { href: '/account', label: 'Account' }];
		case 'admin':
			return [...common, { href: '/handling', label: 'Handling' }, { href: '/balances', label: 'Balances' }, { href: '/admin/users', label: 'Users' }, { href: '/admin/labs', label: 'Labs' }, { href: '/account', label: 'Account' }];
	}
}
