/**
 * Regolog's display vocabulary: the words and badge styles the pages show for stored values (item
 * states and kinds, ledger entries, audit-history kinds). Client-safe; the server's history uses
 * the same list of kinds.
 */

/** Kinds of entry in an item's audit history. */
export const HISTORY_KINDS = ['lineage', 'custody', 'handling', 'weighing', 'blank'] as const;
export type HistoryKind = (typeof HISTORY_KINDS)[number];

export const STATE_LABELS: Record<string, string> = {
	stored: 'stored',
	earmarked: 'earmarked',
	in_transit: 'in transit',
	on_loan: 'on loan',
	consumed: 'consumed',
	lost: 'lost'
};

export const KIND_LABELS: Record<string, string> = { specimen: 'parent specimen', aliquot: 'aliquot', blank: 'blank' };

export const LEDGER_LABELS: Record<string, string> = {
	registered: 'registered',
	split_in: 'split from parent',
	split_out: 'given to aliquot',
	split_loss: 'split loss',
	reweighed: 'reweighed'
};

/**
 * Tailwind classes of the small state badge: the state's tint and words from the one palette
 * (src/lib/components/palette.ts), the same tone as the state's part in the mass-share chart.
 * Whole class names, so Tailwind finds them.
 */
export const STATE_BADGE: Record<string, string> = {
	stored: 'bg-state-stored-tint text-state-stored-text',
	earmarked: 'bg-state-earmarked-tint text-state-earmarked-text',
	in_transit: 'bg-state-in-transit-tint text-state-in-transit-text',
	on_loan: 'bg-state-on-loan-tint text-state-on-loan-text',
	consumed: 'bg-state-consumed-tint text-state-consumed-text',
	lost: 'bg-state-lost-tint text-state-lost-text'
};

/** Tailwind classes of the small state badge (an unknown state reads as a loss, to be looked at). */
export function stateBadge(state: string): string {
	return STATE_BADGE[state] ?? 'bg-loss-tint text-loss-text';
}

/** "± 1.6 µg" for an expanded uncertainty, or a note that the mass was not weighed here. */
export function plusMinus(expandedUg: number | null): string {
	if (expandedUg === null) return '(not weighed here)';
	return `± ${expandedUg < 10 ? expandedUg.toFixed(2) : expandedUg.toFixed(1)} µg`;
}

/** Words for the kinds of document. */
export const DOCUMENT_KIND_LABELS: Record<string, string> = {
	chromatogram: 'Chromatogram',
	photo: 'Photo',
	shipping_form: 'Shipping form',
	other: 'Other',
	blank_control_report: 'Blank-control table'
};
