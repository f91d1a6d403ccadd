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
