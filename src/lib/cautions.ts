/**
 * Regolog's safety cautions: one source of the words for every place a hazard travels to — the
 * transfer form and page, the custody receipt PDF, the "dispatched" message, the handling-session
 * form and the split page. Short on purpose: each flags the hazard and defers to the rules that
 * govern the work (the carrier's dangerous-goods rules, the institution's safety officers, local
 * regulations, the equipment's own operating procedure). Client-safe: no server import.
 */

export interface Caution {
	/** stable key, e.g. "dry_ice", "glovebox" */
	key: string;
	title: string;
	/** what the hazard is and the usual precautions, one sentence each */
	lines: string[];
	/** whom to follow instead of this note */
	defer: string;
}

const TRANSPORT_DEFER =
	"Follow the carrier's dangerous-goods rules, your institution's safety officers and local regulations: they decide how the package is packed, marked and declared, and take precedence over this note.";
const BENCH_DEFER =
	"Follow your institution's safety rules and officers, local regulations and the equipment's own operating procedure: they take precedence over this note.";

export const COOLANT_CAUTIONS: Record<'dry_ice' | 'dry_shipper', Caution> = {
	dry_ice: {
		key: 'dry_ice',
		title: 'Caution: dry ice (solid carbon dioxide)',
		lines: [
			'Dry ice turns into carbon dioxide gas, which can build up and displace breathable air in closed rooms, cold stores and vehicles; at −78.5 °C it burns skin on contact.',
			'Handle it with insulated gloves and eye protection, never seal it in an airtight container (the gas must vent), and record its net mass: carriers ask for it.',
			'Dry ice is a dangerous good in transport.'
		],
		defer: TRANSPORT_DEFER
	},
	dry_shipper: {
		key: 'dry_shipper',
		title: 'Caution: liquid-nitrogen dry shipper',
		lines: [
			'A dry shipper holds liquid nitrogen absorbed in its walls. Liquid nitrogen (−196 °C) burns skin and eyes, and the nitrogen gas it gives off can displace breathable air in closed spaces.',
			'Charge and handle the shipper with cryogenic gloves and a face shield in a ventilated area, pour off any free liquid before shipping, and keep it upright.',
			'A dry shipper may be a dangerous good in transport, as the carrier decides: ask the carrier before booking.'
		],
		defer: TRANSPORT_DEFER
	}
};

/** The coolant's caution, or null for none and cold packs. */
export function coolantCaution(coolant: string | null | undefined): Caution | null {
	return coolant === 'dry_ice' || coolant === 'dry_shipper' ? COOLANT_CAUTIONS[coolant] : null;
}

/** A caution as plain text lines: for a message or a PDF. */
export function cautionText(c: Caution): string[] {
	return [c.title, ...c.lines, c.defer];
}

export const HANDLING_CAUTIONS = {
	glovebox: {
		key: 'glovebox',
		title: 'Glovebox',
		lines: [
			'Check the gloves for pinholes, tears and wear before use, and change a damaged or cut glove.',
			'Keep the box within its pressure range: over-pressure can blow a glove out, under-pressure draws room air in through any leak. Use the antechamber as its procedure says.',
			'The inert gas cannot be breathed: know the oxygen alarm.'
		],
		defer: BENCH_DEFER
	},
	cutting: {
		key: 'cutting',
		title: 'Cutting and sharp tools',
		lines: [
			'Cut away from the holding hand, guard blades when not in use and put used ones in a sharps container.',
			'In a glovebox a cut glove breaches the box: stop and change it.'
		],
		defer: BENCH_DEFER
	},
	vacuum: {
		key: 'vacuum',
		title: 'Vacuum chamber',
		lines: [
			'Check windows and viewports for cracks before pumping down: a failing viewport implodes.',
			'Vent fully before opening, and keep hands clear of moving manipulators and cold surfaces.'
		],
		defer: BENCH_DEFER
	}
} satisfies Record<string, Caution>;

/** Tool names that cut or pierce. */
const SHARP = /\b(saw|blade|scalpel|knife|cutter|chisel|needle|razor|scribe|microtome|cleav\w*|lancet|file)\b/i;

export function isSharpTool(name: string): boolean {
	return SHARP.test(name);
}

/**
 * The cautions for work in these atmospheres (handling-session values such as "argon_glovebox",
 * or collection rules such as "nitrogen glovebox") with these tools; `cutting` when the work is
 * known to cut (a split).
 */
export function handlingCautions(opts: { atmospheres: readonly string[]; tools?: readonly string[]; cutting?: boolean }): Caution[] {
	const out: Caution[] = [];
	if (opts.atmospheres.some((a) => /glove\s*box|glovebox/i.test(a.replace(/_/g, ' ')))) out.push(HANDLING_CAUTIONS.glovebox);
	if (opts.cutting || (opts.tools ?? []).some(isSharpTool)) out.push(HANDLING_CAUTIONS.cutting);
	if (opts.atmospheres.some((a) => /vacuum/i.test(a))) out.push(HANDLING_CAUTIONS.vacuum);
	return out;
}
