/** Words the registry pages show for stored values (client-safe). */
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

/** One entry of GET /api/items/{code}/lineage. */
export interface LineageEntry {
	code: string;
	parentCode: string | null;
	level: number;
	kind: string;
	state: string;
	massUg: number;
	initialMassUg: number;
	holder: string;
	children: number;
}
