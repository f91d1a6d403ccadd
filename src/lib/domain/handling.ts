/**
 * Handling rules of a collection as atmosphere classes (DESIGN.md §3.5). A collection lists its
 * allowed atmospheres in words ("nitrogen glovebox", "ISO 5 cleanroom air"); this module reads them
 * as the classes of exposure.ts. Regolog's rule for ambient laboratory air: it is allowed when the
 * collection lists it, or when the collection sets a positive ambient-air limit (a limit of minutes
 * says that brief exposure is tolerated); a limit of 0 forbids it. Pure; the session form and the
 * server's checks use the same code.
 */
import { ATMOSPHERES, type Atmosphere, type CollectionRules } from './exposure';

// Words match in any case ("Argon glovebox", "ARGON"); the element symbols only as written (Ar, N2),
// so that "ar" inside a word or sentence never counts.
const WORDS: [RegExp, Atmosphere][] = [
	[/nitrogen|\bN2\b|N₂/i, 'nitrogen_glovebox'],
	[/argon/i, 'argon_glovebox'],
	[/\bAr\b/, 'argon_glovebox'],
	[/clean ?room/i, 'cleanroom_air'],
	[/vacuum/i, 'vacuum'],
	[/ambient|laboratory air|\bair\b/i, 'ambient_air']
];

/** The atmosphere class a collection's wording names, or null when it names none of them. */
export function atmosphereClass(words: string): Atmosphere | null {
	const w = words.trim();
	if ((ATMOSPHERES as readonly string[]).includes(w)) return w as Atmosphere;
	for (const [re, cls] of WORDS) if (re.test(w)) return cls;
	return null;
}

/** The collection's rules as exposure() takes them. */
export function rulesOf(allowed: readonly string[], maxAirMinutes: number | null): CollectionRules {
	const classes = new Set<Atmosphere>();
	for (const a of allowed) {
		const c = atmosphereClass(a);
		if (c) classes.add(c);
	}
	if (maxAirMinutes !== null && maxAirMinutes > 0) classes.add('ambient_air');
	if (maxAirMinutes === 0) classes.delete('ambient_air');
	return { allowedAtmospheres: ATMOSPHERES.filter((a) => classes.has(a)), maxAmbientAirMinutes: maxAirMinutes };
}

