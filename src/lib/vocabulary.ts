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

/** Tailwind classes of the small state badge. */
export function stateBadge(state: string): string {
	switch (state) {
		case 'stored':
			return 'bg-tarn-100 text-tarn-900';
		case 'earmarked':
			return 'bg-ochre-100 text-ochre-700';
		case 'in_transit':
		case 'on_loan':
			return 'bg-basalt-100 text-basalt-800';
		default:
			return 'bg-alert-100 text-alert-700';
	}
}

/** "± 1.6 µg" for an expanded uncertainty, or a note that the mass was not weighed here. */
export function plusMinus(expandedUg: number | null): string {
	if (expandedUg === null) return '(not weighed here)';
	return `± ${expandedUg < 10 ? expandedUg.toFixed(2) : expandedUg.toFixed(1)} µg`;
}
