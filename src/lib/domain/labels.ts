/**
 * What a label says about handling, from the collection's rules: Regolog's own short words,
 * sized for the foot of a 50.8 × 25.4 mm label. Pure; the label renderer and the item page use it.
 */

export interface HandlingRules {
	/** Atmospheres the collection allows, e.g. "nitrogen glovebox", "argon glovebox", "vacuum". */
	allowedAtmospheres: readonly string[];
	/** Maximum minutes of ambient-air exposure; 0: none at all; null: no limit. */
	maxAirExposureMin: number | null;
}

/** Short forms of the protected atmospheres; anything else counts as not protected. */
// Names match in any case ("Argon glovebox"); the element symbols only as written (Ar, He).
const PROTECTED: [RegExp, string][] = [
	[/\bnitrogen\b|\bN2\b|N₂/i, 'N₂'],
	[/\bargon\b/i, 'Ar'],
	[/\bAr\b/, 'Ar'],
	[/\bhelium\b/i, 'He'],
	[/\bHe\b/, 'He'],
	[/\bvacuum\b/i, 'vac']
];

function shortAtmosphere(name: string): string | null {
	for (const [re, short] of PROTECTED) if (re.test(name)) return short;
	return null;
}

/** Air exposure up to this many minutes is worth a mark; longer limits are left to the item page. */
export const AIR_MARK_LIMIT_MIN = 60;

/**
 * The handling mark for a collection, or null when its rules need none on the label:
 * - no air allowed and only protected atmospheres: "N₂ only · no air" (atmospheres joined by "/");
 * - no air allowed otherwise: "no air";
 * - a short air limit: "air ≤ 10 min";
 * - otherwise none.
 */
export function handlingMark(rules: HandlingRules): string | null {
	const air = rules.maxAirExposureMin;
	if (air === 0) {
		const shorts = rules.allowedAtmospheres.map(shortAtmosphere);
		const all = shorts.length > 0 && shorts.every((s) => s !== null);
		const unique = [...new Set(shorts)];
		return all && unique.length <= 2 ? `${unique.join('/')} only · no air` : 'no air';
	}
	if (air !== null && air <= AIR_MARK_LIMIT_MIN) return `air ≤ ${air} min`;
	return null;
}

/** What a label's hazard mark is read from: where the item is kept and what it travels with. */
export interface HazardSource {
	/** the item's storage place, e.g. "LN₂ dewar D-2, vapour phase" */
	storagePlace?: string | null;
	/** coolant of a transfer the item is on and that has not arrived (prepared or dispatched) */
	coolant?: string | null;
}

const CRYOGENIC_STORE = /liquid[\s-]+nitrogen|\bLN2\b|LN₂|\bdewar\b|cryogenic|vapou?r phase|\bcryo\b/i;
const DRY_ICE_STORE = /dry[\s-]+ice|\bsolid CO2\b|solid CO₂/i;

/**
 * The hazard a label flags, in Regolog's own short words, or null: the transfer's coolant first
 * (dry ice, a liquid-nitrogen dry shipper), then the item's storage (cryogenic, dry ice).
 */
export function hazardMark(h: HazardSource): string | null {
	if (h.coolant === 'dry_ice') return 'dry ice';
	if (h.coolant === 'dry_shipper') return 'LN₂ dry shipper';
	const place = h.storagePlace ?? '';
	if (CRYOGENIC_STORE.test(place)) return 'LN₂ cryogenic';
	if (DRY_ICE_STORE.test(place)) return 'dry ice';
	return null;
}

/** The label's mark: a hazard (drawn striped, with "site rules") ahead of the handling words. */
export function labelMark(handling: string | null, hazard: string | null): { text: string; hazard?: boolean } | null {
	if (hazard) return { text: handling ? `${hazard} · ${handling}` : hazard, hazard: true };
	return handling ? { text: handling } : null;
}
