import { ApiProblem } from '../api';
import type { SessionUser } from './types';

/** What visibility depends on: the role and, for lab members, the lab. */
export type Viewer = Pick<SessionUser, 'role' | 'labId'>;

/**
 * Lab visibility: lab members see only their own lab's records; facility staff see everything.
 * Every query for lab-owned records goes through these helpers.
 */
export function labFilter(user: Viewer): string | null {
	return user.role === 'lab_member' ? user.labId : null;
}

/** True when the user may see a record held by or belonging to `labId` (null: the facility). */
export function canSeeLab(user: Viewer, labId: string | null): boolean {
	if (user.role !== 'lab_member') return true;
	return labId !== null && labId === user.labId;
}

/** Throws 404 (not 403: a guessed id must not confirm that a record exists) when out of sight. */
export function assertVisible(user: Viewer, labId: string | null, what = 'record'): void {
	if (!canSeeLab(user, labId)) throw new ApiProblem(404, 'not_found', `No such ${what}.`);
}

/** A SQL condition for tables with a lab column; returns '' for staff. */
export function labCondition(user: Viewer, column: string, replacements: Record<string, unknown>): string {
	const lab = labFilter(user);
	if (lab === null) return '';
	replacements.scopeLabId = lab;
	return ` AND ${column} = :scopeLabId`;
}
