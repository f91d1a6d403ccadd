/**
 * Exposure and blank coverage of one item (DESIGN.md §3.5–3.6).
 *
 * An item's material was out of its sealed container during its own handling sessions and, before
 * it was split off, during its ancestors' sessions. This module counts those minutes per
 * atmosphere class, checks them against the collection's handling rules, and works out which share
 * of the handling time had a witness or procedural blank with an attached analysis exposed alongside.
 *
 * Choices (no published source; these are Regolog's rules, stated so a reviewer can follow them):
 * - **Inheritance.** A session recorded on an ancestor counts for the item only up to the moment the
 *   material of the item left that ancestor: for the parent, the time the item was split off; for
 *   the grandparent, the time the parent was split off; and so on (if the recorded split times are
 *   out of order, the earliest one along the path from the item up to that ancestor applies). A
 *   session that straddles that moment is clipped at it; one that starts at or after it is left out.
 * - **Overlaps.** Minutes are the measure of the *union* of intervals, so two overlapping sessions
 *   (a split recorded on the parent and on the child, a session entered twice) are not counted
 *   twice. Per class: the union of that class's intervals. Handling minutes: the union over all
 *   classes. Sessions of two different atmospheres that overlap in time are physically impossible
 *   for one piece of material; both are counted in their own class and the pair is listed under
 *   `overlaps` so a curator can correct the record.
 * - **Session touching several generations.** A session that lists both the item and an ancestor
 *   counts as the item's own (the nearest generation wins, with its later or absent cut-off).
 * - **Coverage.** covered minutes = union of the counted intervals of sessions with at least one
 *   blank that has an analysis attached; share = covered / handling minutes, `null` when there are
 *   no handling minutes at all (nothing to cover, which is not the same as fully covered).
 *
 * Pure TypeScript: no database, framework or Node-only import, so the item page's timeline and the
 * server's checks run the same code.
 */

export const ATMOSPHERES = ['nitrogen_glovebox', 'argon_glovebox', 'cleanroom_air', 'ambient_air', 'vacuum'] as const;
export type Atmosphere = (typeof ATMOSPHERES)[number];

export const ATMOSPHERE_LABELS: Record<Atmosphere, string> = {
	nitrogen_glovebox: 'Nitrogen glovebox',
	argon_glovebox: 'Argon glovebox',
	cleanroom_air: 'Cleanroom air',
	ambient_air: 'Ambient laboratory air',
	vacuum: 'Vacuum'
};

/** A moment in time: a Date, an ISO 8601 text, or milliseconds since 1970-01-01T00:00Z. */
export type Instant = Date | string | number;

/** Error for input that cannot be accepted; `field` names the input ("sessions.2.end"). */
export class ExposureInputError extends Error {
	readonly field: string;
	constructor(field: string, message: string) {
		super(message);
		this.name = 'ExposureInputError';
		this.field = field;
	}
}

export interface SessionBlank {
	blankId: string;
	/** true when an analysis of this blank is attached (a blank-control report or document) */
	analysed: boolean;
}

export interface HandlingSessionInput {
	id: string;
	atmosphere: Atmosphere;
	start: Instant;
	end: Instant;
	/** the items that were out of their containers in this session */
	itemIds: readonly string[];
	/** the blanks exposed alongside */
	blanks?: readonly SessionBlank[];
}

export interface AncestorLink {
	itemId: string;
	/** when the next generation down the path (the item itself for the parent) was split off this ancestor */
	childSplitAt: Instant;
}

export interface Lineage {
	itemId: string;
	/** nearest first: parent, grandparent, … up to the parent specimen */
	ancestors: readonly AncestorLink[];
}

export interface CollectionRules {
	allowedAtmospheres: readonly Atmosphere[];
	/** maximum minutes of ambient-air exposure (own and inherited); null: no limit */
	maxAmbientAirMinutes: number | null;
}

export type MinutesByAtmosphere = Record<Atmosphere, number>;

/** One session as it counts for the item: clipped at the split where inherited. */
export interface CountedSession {
	sessionId: string;
	atmosphere: Atmosphere;
	/** the lineage item the session was recorded on */
	itemId: string;
	/** 0 the item itself, 1 its parent, 2 the grandparent, … */
	generation: number;
	inherited: boolean;
	/** counted interval; `end` is before the recorded end when the session was clipped */
	start: Date;
	end: Date;
	clipped: boolean;
	minutes: number;
	analysedBlanks: string[];
	unanalysedBlanks: string[];
}

export type ExposureViolation =
	| {
			kind: 'atmosphere-not-allowed';
			sessionId: string;
			atmosphere: Atmosphere;
			itemId: string;
			generation: number;
			inherited: boolean;
			minutes: number;
			message: string;
	  }
	| {
			kind: 'ambient-air-over-limit';
			minutes: number;
			limitMinutes: number;
			ownMinutes: number;
			inheritedMinutes: number;
			message: string;
	  };

export interface UncoveredSession {
	sessionId: string;
	itemId: string;
	generation: number;
	inherited: boolean;
	atmosphere: Atmosphere;
	minutes: number;
	reason: 'no-blank' | 'blank-not-analysed';
}

export interface SessionOverlap {
	a: string;
	b: string;
	atmospheres: [Atmosphere, Atmosphere];
	minutes: number;
}

export interface ExposureReport {
	itemId: string;
	/** counted sessions in time order: the item page's timeline */
	sessions: CountedSession[];
	minutes: { own: MinutesByAtmosphere; inherited: MinutesByAtmosphere; total: MinutesByAtmosphere };
	/** union of all counted intervals, whatever the atmosphere */
	handlingMinutes: number;
	violations: ExposureViolation[];
	coverage: { share: number | null; coveredMinutes: number; handlingMinutes: number; uncovered: UncoveredSession[] };
	overlaps: SessionOverlap[];
}

const MS_PER_MINUTE = 60_000;

/** Reads an Instant as milliseconds since the epoch. */
export function toMs(x: Instant, field: string): number {
	const ms = x instanceof Date ? x.getTime() : typeof x === 'number' ? x : Date.parse(x);
	if (!Number.isFinite(ms)) throw new ExposureInputError(field, `${field} is not a valid time: ${String(x)}`);
	return ms;
}

type Interval = readonly [number, number];

/** Sorted, disjoint union of half-open intervals [start, end). Plain interval arithmetic. */
export function unionIntervals(intervals: readonly Interval[]): Interval[] {
	const sorted = intervals.filter(([s, e]) => e > s).sort((x, y) => x[0] - y[0] || x[1] - y[1]);
	const out: [number, number][] = [];
	for (const [s, e] of sorted) {
		const last = out[out.length - 1];
		if (last && s <= last[1]) last[1] = Math.max(last[1], e);
		else out.push([s, e]);
	}
	return out;
}

/** Total length of the union of intervals (overlaps counted once). */
export function unionLength(intervals: readonly Interval[]): number {
	return unionIntervals(intervals).reduce((sum, [s, e]) => sum + (e - s), 0);
}

function emptyMinutes(): MinutesByAtmosphere {
	return { nitrogen_glovebox: 0, argon_glovebox: 0, cleanroom_air: 0, ambient_air: 0, vacuum: 0 };
}

function minutesByClass(sessions: readonly CountedSession[]): MinutesByAtmosphere {
	const out = emptyMinutes();
	for (const a of ATMOSPHERES) {
		out[a] = unionLength(sessions.filter((s) => s.atmosphere === a).map(iv)) / MS_PER_MINUTE;
	}
	return out;
}

function iv(s: CountedSession): Interval {
	return [s.start.getTime(), s.end.getTime()];
}

interface NormalSession {
	id: string;
	atmosphere: Atmosphere;
	start: number;
	end: number;
	itemIds: Set<string>;
	blanks: SessionBlank[];
}

/** Validates sessions and merges repeated entries of one session id (the same session listed per item). */
function normaliseSessions(sessions: readonly HandlingSessionInput[]): NormalSession[] {
	const byId = new Map<string, NormalSession>();
	sessions.forEach((s, i) => {
		const f = `sessions.${i}`;
		if (!(ATMOSPHERES as readonly string[]).includes(s.atmosphere)) {
			throw new ExposureInputError(`${f}.atmosphere`, `unknown atmosphere class "${s.atmosphere}"; expected one of ${ATMOSPHERES.join(', ')}`);
		}
		const start = toMs(s.start, `${f}.start`);
		const end = toMs(s.end, `${f}.end`);
		if (end < start) throw new ExposureInputError(`${f}.end`, `session ${s.id} ends before it starts`);
		const seen = byId.get(s.id);
		if (seen) {
			if (seen.atmosphere !== s.atmosphere || seen.start !== start || seen.end !== end) {
				throw new ExposureInputError(f, `session ${s.id} is listed twice with different atmosphere or times`);
			}
			s.itemIds.forEach((x) => seen.itemIds.add(x));
			for (const b of s.blanks ?? []) if (!seen.blanks.some((x) => x.blankId === b.blankId && x.analysed === b.analysed)) seen.blanks.push(b);
		} else {
			byId.set(s.id, { id: s.id, atmosphere: s.atmosphere, start, end, itemIds: new Set(s.itemIds), blanks: [...(s.blanks ?? [])] });
		}
	});
	return [...byId.values()];
}

/**
 * The path from the item up to its parent specimen with, for each generation, the moment after
 * which that generation's sessions no longer touch the item's material (Infinity for the item).
 */
function cutoffs(lineage: Lineage): { itemId: string; cutoff: number }[] {
	const out = [{ itemId: lineage.itemId, cutoff: Infinity }];
	let cutoff = Infinity;
	lineage.ancestors.forEach((a, i) => {
		cutoff = Math.min(cutoff, toMs(a.childSplitAt, `ancestors.${i}.childSplitAt`));
		out.push({ itemId: a.itemId, cutoff });
	});
	const ids = new Set(out.map((g) => g.itemId));
	if (ids.size !== out.length) throw new ExposureInputError('ancestors', 'an item appears twice in its own lineage');
	return out;
}

/** Sessions as they count for the item: the nearest generation each one touches, clipped at its cut-off. */
export function countedSessions(lineage: Lineage, sessions: readonly HandlingSessionInput[]): CountedSession[] {
	const path = cutoffs(lineage);
	const out: CountedSession[] = [];
	for (const s of normaliseSessions(sessions)) {
		const generation = path.findIndex((g) => s.itemIds.has(g.itemId));
		if (generation < 0) continue;
		const { itemId, cutoff } = path[generation];
		if (generation > 0 && s.start >= cutoff) continue;
		const end = Math.min(s.end, cutoff);
		out.push({
			sessionId: s.id,
			atmosphere: s.atmosphere,
			itemId,
			generation,
			inherited: generation > 0,
			start: new Date(s.start),
			end: new Date(end),
			clipped: end < s.end,
			minutes: (end - s.start) / MS_PER_MINUTE,
			analysedBlanks: s.blanks.filter((b) => b.analysed).map((b) => b.blankId),
			unanalysedBlanks: s.blanks.filter((b) => !b.analysed).map((b) => b.blankId)
		});
	}
	return out.sort((x, y) => x.start.getTime() - y.start.getTime() || x.generation - y.generation || (x.sessionId < y.sessionId ? -1 : 1));
}

function overlapsOf(sessions: readonly CountedSession[]): SessionOverlap[] {
	const out: SessionOverlap[] = [];
	for (let i = 0; i < sessions.length; i++) {
		for (let j = i + 1; j < sessions.length; j++) {
			const a = sessions[i];
			const b = sessions[j];
			if (a.atmosphere === b.atmosphere) continue;
			const ms = Math.min(a.end.getTime(), b.end.getTime()) - Math.max(a.start.getTime(), b.start.getTime());
			if (ms > 0) out.push({ a: a.sessionId, b: b.sessionId, atmospheres: [a.atmosphere, b.atmosphere], minutes: ms / MS_PER_MINUTE });
		}
	}
	return out;
}

function violationsOf(sessions: readonly CountedSession[], minutes: ExposureReport['minutes'], rules: CollectionRules): ExposureViolation[] {
	const out: ExposureViolation[] = [];
	for (const s of sessions) {
		if (rules.allowedAtmospheres.includes(s.atmosphere)) continue;
		out.push({
			kind: 'atmosphere-not-allowed',
			sessionId: s.sessionId,
			atmosphere: s.atmosphere,
			itemId: s.itemId,
			generation: s.generation,
			inherited: s.inherited,
			minutes: s.minutes,
			message: `${ATMOSPHERE_LABELS[s.atmosphere]} is not allowed for this collection (session ${s.sessionId}${s.inherited ? `, inherited from ${s.itemId}` : ''}).`
		});
	}
	const limit = rules.maxAmbientAirMinutes;
	if (limit !== null && minutes.total.ambient_air > limit) {
		out.push({
			kind: 'ambient-air-over-limit',
			minutes: minutes.total.ambient_air,
			limitMinutes: limit,
			ownMinutes: minutes.own.ambient_air,
			inheritedMinutes: minutes.inherited.ambient_air,
			message: `${round1(minutes.total.ambient_air)} min in ambient air, above the collection's limit of ${limit} min.`
		});
	}
	return out;
}

function round1(x: number): string {
	return (Math.round(x * 10) / 10).toString();
}

/**
 * Exposure of one item (DESIGN.md §3.5) and its blank coverage (§3.6): minutes per atmosphere
 * class own, inherited and in total; rule violations; the covered share of handling minutes and
 * the sessions without an analysed blank. `sessions` may include sessions of unrelated items;
 * only those that list the item or one of its ancestors count.
 */
export function exposure(lineage: Lineage, sessions: readonly HandlingSessionInput[], rules: CollectionRules): ExposureReport {
	for (const a of rules.allowedAtmospheres) {
		if (!(ATMOSPHERES as readonly string[]).includes(a)) throw new ExposureInputError('rules.allowedAtmospheres', `unknown atmosphere class "${a}"`);
	}
	if (rules.maxAmbientAirMinutes !== null && !(rules.maxAmbientAirMinutes >= 0)) {
		throw new ExposureInputError('rules.maxAmbientAirMinutes', 'the ambient-air limit must be a number of minutes ≥ 0, or none');
	}
	const counted = countedSessions(lineage, sessions);
	const minutes = {
		own: minutesByClass(counted.filter((s) => !s.inherited)),
		inherited: minutesByClass(counted.filter((s) => s.inherited)),
		total: minutesByClass(counted)
	};
	const handlingMinutes = unionLength(counted.map(iv)) / MS_PER_MINUTE;
	const coveredMinutes = unionLength(counted.filter((s) => s.analysedBlanks.length > 0).map(iv)) / MS_PER_MINUTE;
	const uncovered: UncoveredSession[] = counted
		.filter((s) => s.analysedBlanks.length === 0)
		.map((s) => ({
			sessionId: s.sessionId,
			itemId: s.itemId,
			generation: s.generation,
			inherited: s.inherited,
			atmosphere: s.atmosphere,
			minutes: s.minutes,
			reason: s.unanalysedBlanks.length > 0 ? 'blank-not-analysed' : 'no-blank'
		}));
	return {
		itemId: lineage.itemId,
		sessions: counted,
		minutes,
		handlingMinutes,
		violations: violationsOf(counted, minutes, rules),
		coverage: {
			// covered ⊆ handling, so the share is at most 1; the clamp only absorbs rounding of fractional-ms inputs
			share: handlingMinutes > 0 ? Math.min(1, coveredMinutes / handlingMinutes) : null,
			coveredMinutes,
			handlingMinutes,
			uncovered
		},
		overlaps: overlapsOf(counted)
	};
}
