export const ROLES = ['admin', 'curator', 'lab_member', 'auditor'] as const;
export type Role = (typeof ROLES)[number];

export const ROLE_LABELS: Record<Role, string> = {
	admin: 'Administrator',
	curator: 'Curator',
	lab_member: 'Lab member',
	auditor: 'Auditor'
};

export interface SessionUser {
	id: string;
	email: string;
	name: string;
	role: Role;
	roleLabel: string;
	labId: string | null;
	labName: string | null;
}

export interface SessionInfo {
	id: string;
	expiresAt: Date;
	viaToken: boolean;
}
