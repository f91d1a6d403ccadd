import { describe, it, expect } from 'vitest';
import { render } from 'svelte/server';
import LedgerChart from '../../src/lib/components/LedgerChart.svelte';

// invented ledger of a parent specimen over a season: registered, two splits (each writes its
// entries at one instant), a loss of a few µg within its U, and a reweighing
const ENTRIES = [
	{ seq: 1, at: '2026-02-03T09:12:00Z', kind: 'registered', deltaUg: 2_184_000, balanceUg: 2_184_000, expandedUg: 1.63 },
	{ seq: 2, at: '2026-03-10T14:05:00Z', kind: 'split_out', deltaUg: -30_000, balanceUg: 2_154_000, expandedUg: 2.31 },
	{ seq: 3, at: '2026-03-10T14:05:00Z', kind: 'split_out', deltaUg: -20_000, balanceUg: 2_134_000, expandedUg: 2.31 },
	{ seq: 4, at: '2026-03-10T14:05:00Z', kind: 'split_loss', deltaUg: -3, balanceUg: 2_133_997, expandedUg: 3.27 },
	{ seq: 5, at: '2026-05-21T08:40:00Z', kind: 'split_out', deltaUg: -250_000, balanceUg: 1_883_997, expandedUg: 2.31 },
	{ seq: 6, at: '2026-05-21T08:40:00Z', kind: 'split_loss', deltaUg: -12, balanceUg: 1_883_985, expandedUg: 3.27 },
	{ seq: 7, at: '2026-06-30T11:00:00Z', kind: 'reweighed', deltaUg: -1, balanceUg: 1_883_984, expandedUg: 1.63 }
];

describe('the ledger chart as rendered', () => {
	const { body } = render(LedgerChart, { props: { entries: ENTRIES } });
	const axis = (name: string) => [...body.matchAll(new RegExp(`data-axis="${name}"[\\s\\S]*?</g>`, 'g'))].map((m) => [...m[0].matchAll(/<text[^>]*>([^<]+)<\/text>/g)].map((t) => t[1]));

	it('reads round masses on its mass axis', () => {
		expect(axis('mass')[0]).toEqual(['1850 mg', '1900 mg', '1950 mg', '2000 mg', '2050 mg', '2100 mg', '2150 mg', '2200 mg']);
	});
	it('labels its time axis in UTC at round dates', () => {
		const labels = axis('time')[0].filter((l) => !l.startsWith('Time'));
		expect(labels.length).toBeGreaterThanOrEqual(3);
		for (const l of labels) expect(l).toMatch(/^(\d\d [A-Z][a-z]{2}|[A-Z][a-z]{2} 2026)$/);
	});
	it('places the changes and their U on decades, µg to g', () => {
		expect(axis('change')[0]).toEqual(['0.1 µg', '1 µg', '10 µg', '100 µg', '1 mg', '10 mg', '100 mg', '1 g', '10 g']);
	});
	it('says which changes are no larger than their U, in a sentence that describes the chart', () => {
		expect(body).toMatch(/aria-describedby="([^"]+)-summary"/);
		expect(body).toContain('7 ledger entries from 2026-02-03 09:12 UTC to 2026-06-30 11:00 UTC');
		expect(body).toContain('2 changes are no larger than the expanded uncertainty of the mass after it: #4 split loss, #7 reweighed.');
	});
	it('numbers every entry once above and once below the panels', () => {
		for (const e of ENTRIES) expect(body.match(new RegExp(`>${e.seq}</text>`, 'g'))?.length).toBe(2);
	});
	it('names each mark with its entry, words apart', () => {
		expect(body).toContain('<title>#4 split loss: −0.003 mg, U = 3.27 µg (within U)</title>');
		expect(body).toContain('<title>#2 given to aliquot, 2026-03-10 14:05 UTC: 2154.000 mg ± 2.31 µg</title>');
	});
});

describe('the ledger chart of an empty ledger', () => {
	it('says so instead of drawing axes', () => {
		const { body } = render(LedgerChart, { props: { entries: [] } });
		expect(body).toContain('The ledger has no entries yet.');
		expect(body).not.toContain('<svg');
	});
});
