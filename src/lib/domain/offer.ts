/**
 * Material on offer (DESIGN.md §3.11): what a lab may ask for, item by item, and the filters a
 * scientist thinks in. The same constraints travel with an allocation request and bind the
 * allocation planner (planner.ts), so the offer page, the request and the plans can never disagree
 * on what "never exposed to ambient air" or "at least 80 % blank coverage" means.
 *
 * Pure TypeScript: no database, framework or Node-only import.
 */
import { ATMOSPHERES, ATMOSPHERE_LABELS, type Atmosphere, type ExposureReport, type MinutesByAtmosphere } from './exposure';
import { formatMg } from './mass';

/** An item's exposure as the offer shows it: minutes per atmosphere class (DESIGN §3.5). */
export interface OfferExposure {
	total: MinutesByAtmosphere;
	own: MinutesByAtmosphere;
	inherited: MinutesByAtmosphere;
	/** true when any counted session, own or inherited, was in ambient laboratory air */
	everAmbient: boolean;
	/** number of the collection's rules broken along the item's lineage (exposure.ts violations) */
	violations: number;
}

export interface OfferItem {
	code: string;
	collection: string;
	kind: 'specimen' | 'aliquot';
	massUg: number;
	/** the part of this item that may be asked for before the collection's reserve is touched */
	allocatableUg: number;
	depth: number;
	exposure: OfferExposure;
	/** share of handling minutes with an analysed blank alongside (DESIGN §3.6); null: never handled */
	blankCoverage: number | null;
}

/** Filters of the offer, kept by a request as its constraints. All optional. */
export interface OfferConstraints {
	minMassUg?: number;
	neverAmbient?: boolean;
	/** maximum minutes (own and inherited) per atmosphere class */
	maxMinutes?: Partial<Record<Atmosphere, number>>;
	/** minimum blank coverage, a share from 0 to 1; an item never handled counts as covered */
	minCoverage?: number;
	kind?: 'specimen' | 'aliquot';
}

const ZERO: MinutesByAtmosphere = Object.freeze({ nitrogen_glovebox: 0, argon_glovebox: 0, cleanroom_air: 0, ambient_air: 0, vacuum: 0 });
/** The exposure of material that was never out of its container: shared, never changed. */
export const NO_EXPOSURE: OfferExposure = Object.freeze({ total: ZERO, own: ZERO, inherited: ZERO, everAmbient: false, violations: 0 });

/** The offer's summary of an exposure report (exposure.ts). */
export function offerExposure(report: ExposureReport): OfferExposure {
	if (report.sessions.length === 0 && report.violations.length === 0) return NO_EXPOSURE;
	return {
		total: report.minutes.total,
		own: report.minutes.own,
		inherited: report.minutes.inherited,
		everAmbient: report.sessions.some((s) => s.atmosphere === 'ambient_air'),
		violations: report.violations.length
	};
}

/** One constraint an item does not meet: which, in plain words, and how far off (0 = just). */
export interface ConstraintMiss {
	field: 'minMassUg' | 'neverAmbient' | `maxMinutes.${Atmosphere}` | 'minCoverage' | 'kind' | 'rules';
	reason: string;
	/** how far the item is from meeting it, as a share of the limit (for "closest first") */
	distance: number;
}

const pct = (x: number) => `${Math.round(x * 1000) / 10} %`;
const min1 = (x: number) => `${Math.round(x * 10) / 10} min`;

/** Every constraint (and rule) the item misses; empty when it qualifies. */
export function constraintMisses(item: Pick<OfferItem, 'code' | 'kind' | 'massUg' | 'exposure' | 'blankCoverage'>, c: OfferConstraints): ConstraintMiss[] {
	const out: ConstraintMiss[] = [];
	if (item.exposure.violations > 0) {
		out.push({ field: 'rules', reason: `${item.code} breaks the collection's handling rules along its lineage (${item.exposure.violations} flag${item.exposure.violations > 1 ? 's' : ''} on its exposure record)`, distance: item.exposure.violations });
	}
	if (c.kind && item.kind !== c.kind) out.push({ field: 'kind', reason: `${item.code} is ${item.kind === 'specimen' ? 'a parent specimen' : 'an aliquot'}; the request asks for ${c.kind === 'specimen' ? 'parent specimens' : 'aliquots'}`, distance: 1 });
	if (c.minMassUg !== undefined && item.massUg < c.minMassUg) {
		out.push({ field: 'minMassUg', reason: `${item.code} holds ${formatMg(item.massUg)}, less than the ${formatMg(c.minMassUg)} asked for as a minimum`, distance: (c.minMassUg - item.massUg) / c.minMassUg });
	}
	if (c.neverAmbient && item.exposure.everAmbient) {
		out.push({ field: 'neverAmbient', reason: `${item.code} met ambient air for ${min1(item.exposure.total.ambient_air)}${item.exposure.inherited.ambient_air > 0 ? ' (inherited from its parent before the split)' : ''}; the request asks for material never exposed to it`, distance: 1 + item.exposure.total.ambient_air });
	}
	for (const a of ATMOSPHERES) {
		const limit = c.maxMinutes?.[a];
		if (limit === undefined) continue;
		const m = item.exposure.total[a];
		if (m > limit) out.push({ field: `maxMinutes.${a}`, reason: `${item.code} has ${min1(m)} in ${ATMOSPHERE_LABELS[a].toLowerCase()}, above the ${min1(limit)} allowed by the request`, distance: (m - limit) / Math.max(limit, 1) });
	}
	if (c.minCoverage !== undefined && item.blankCoverage !== null && item.blankCoverage < c.minCoverage) {
		out.push({ field: 'minCoverage', reason: `${item.code} had an analysed blank alongside for ${pct(item.blankCoverage)} of its handling time, below the ${pct(c.minCoverage)} asked for`, distance: (c.minCoverage - item.blankCoverage) / Math.max(c.minCoverage, 0.01) });
	}
	return out;
}

export function meetsConstraints(item: Parameters<typeof constraintMisses>[0], c: OfferConstraints): boolean {
	return constraintMisses(item, c).length === 0;
}

/** True when a constraints object says nothing. */
export function noConstraints(c: OfferConstraints | null | undefined): boolean {
	if (!c) return true;
	return c.minMassUg === undefined && !c.neverAmbient && !Object.keys(c.maxMinutes ?? {}).length && c.minCoverage === undefined && c.kind === undefined;
}

/** The constraints in plain words, for the request page and the planner's explanations. */
export function describeConstraints(c: OfferConstraints | null | undefined): string[] {
	if (!c) return [];
	const out: string[] = [];
	if (c.neverAmbient) out.push('never exposed to ambient air');
	for (const a of ATMOSPHERES) if (c.maxMinutes?.[a] !== undefined) out.push(`at most ${c.maxMinutes[a]} min in ${ATMOSPHERE_LABELS[a].toLowerCase()}`);
	if (c.minCoverage !== undefined) out.push(`blank coverage at least ${pct(c.minCoverage)}`);
	if (c.minMassUg !== undefined) out.push(`from items of at least ${formatMg(c.minMassUg)}`);
	if (c.kind) out.push(c.kind === 'specimen' ? 'parent specimens only' : 'aliquots only');
	return out;
}

/** Columns the offer sorts by. */
export const OFFER_SORTS = ['code', 'mass', 'allocatable', 'depth', 'ambient', 'handled', 'coverage', 'kind'] as const;
export type OfferSort = (typeof OFFER_SORTS)[number];

/** Sum of minutes over every atmosphere class (the item's handled minutes, counting overlaps per class). */
export function handledMinutes(e: OfferExposure): number {
	let s = 0;
	for (const a of ATMOSPHERES) s += e.total[a];
	return s;
}

/** The value an item sorts by; numbers only, so cursors are plain JSON. Never-handled coverage sorts first. */
export function sortValue(item: OfferItem, sort: OfferSort): number | string {
	switch (sort) {
		case 'code':
			return item.code;
		case 'mass':
			return item.massUg;
		case 'allocatable':
			return item.allocatableUg;
		case 'depth':
			return item.depth;
		case 'ambient':
			return item.exposure.total.ambient_air;
		case 'handled':
			return handledMinutes(item.exposure);
		case 'coverage':
			return item.blankCoverage === null ? -1 : item.blankCoverage;
		case 'kind':
			return item.kind;
	}
}
