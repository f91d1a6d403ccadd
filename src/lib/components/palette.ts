/**
 * Regolog's one palette. Tailwind's theme (tailwind.config.ts) is built from this module, so a
 * page's badge, a chart's mark and the colour-blind and contrast checks
 * (tests/unit/palette.test.ts) all read the same values. Client-safe: no imports.
 *
 * `scales` are the named tones of the look (basalt greys, regolith ochre, tarn teal, mere blue,
 * alert red). `meaning` names what a colour says, so a component asks for "the colour of a blank"
 * rather than a hex value: `mark` is the fill or stroke in a chart (at least 3:1 against white,
 * WCAG 2.1 SC 1.4.11), `tint` and `text` are a badge's background and its words (at least 4.5:1,
 * SC 1.4.3).
 */

export const scales = {
	basalt: {
		50: '#f6f6f4',
		100: '#e9e8e3',
		200: '#d3d1c8',
		300: '#b3afa2',
		400: '#8c8677',
		500: '#6f6a5c',
		700: '#3f3c34',
		800: '#2b2924',
		900: '#1c1b18'
	},
	ochre: { 100: '#f8ead2', 300: '#e7c27f', 500: '#c98a2b', 600: '#c67600', 700: '#8a5a14' },
	tarn: { 100: '#dcefee', 300: '#8fc7c3', 500: '#2e7d89', 700: '#1d524f', 900: '#0f2e2c' },
	mere: { 100: '#e1e9f6', 300: '#9db4dc', 500: '#314d7f', 700: '#223a63' },
	alert: { 100: '#fbe3df', 500: '#b8322e', 700: '#7d2415' },
	heather: { 500: '#5b4f8a' }
} as const;

const { basalt, ochre, tarn, mere, alert, heather } = scales;

/** A colour with its chart mark and its badge background and words. */
export interface Tone {
	mark: string;
	tint: string;
	text: string;
}

export const meaning = {
	/** Item states (DESIGN.md §2): badges on the item pages and the mass-share chart's parts. */
	state: {
		stored: { mark: tarn[500], tint: tarn[100], text: tarn[900] },
		earmarked: { mark: ochre[600], tint: ochre[100], text: ochre[700] },
		in_transit: { mark: mere[500], tint: mere[100], text: mere[700] },
		on_loan: { mark: mere[500], tint: mere[100], text: mere[700] },
		consumed: { mark: basalt[400], tint: basalt[100], text: basalt[800] },
		lost: { mark: basalt[800], tint: basalt[800], text: '#ffffff' }
	},
	/** Mass that left an item in a split without going to a child. */
	loss: { mark: alert[500], tint: alert[100], text: alert[700] },
	/** Flags of a blank-control result; the LOD and LOQ lines of the blank chart take the first two. */
	flag: {
		below_lod: { mark: alert[500], tint: alert[100], text: alert[700] },
		below_loq: { mark: ochre[600], tint: ochre[100], text: ochre[700] },
		blank_dominated: { mark: ochre[600], tint: ochre[100], text: ochre[700] },
		possible_contamination: { mark: alert[700], tint: alert[100], text: alert[700] }
	},
	/** Blanks (witness coupons, procedural blanks) and their replicates. */
	blank: { mark: basalt[400], tint: basalt[100], text: basalt[800] },
	/** Samples: their signals, and an item's own recorded mass. */
	sample: { mark: tarn[500], tint: tarn[100], text: tarn[900] },
	/** Which enantiomer is in excess (ee > 0: L, ee < 0: D). */
	excess: {
		L: { mark: ochre[600], tint: ochre[100], text: ochre[700] },
		D: { mark: mere[500], tint: mere[100], text: mere[700] }
	},
	/** The neutral parts of a chart: words, axis, grid lines, uncertainty bands. */
	chart: { ink: basalt[800], muted: basalt[700], axis: basalt[500], rule: basalt[200], grid: basalt[100], band: ochre[300], paper: '#ffffff' }
} as const;

/**
 * The atmosphere classes on the handling timeline and in its legend: a mark, and a pattern for the
 * two classes that count as exposure (ambient air hatched, cleanroom air dotted), so neither colour
 * nor pattern is the only cue; every use also prints the class name.
 */
export const ATMOSPHERE_COLOURS: Record<'nitrogen_glovebox' | 'argon_glovebox' | 'cleanroom_air' | 'ambient_air' | 'vacuum', { fill: string; pattern: 'solid' | 'hatch' | 'dots' }> = {
	nitrogen_glovebox: { fill: tarn[500], pattern: 'solid' },
	argon_glovebox: { fill: heather[500], pattern: 'solid' },
	cleanroom_air: { fill: ochre[500], pattern: 'dots' },
	ambient_air: { fill: alert[500], pattern: 'hatch' },
	vacuum: { fill: basalt[700], pattern: 'solid' }
};

/** Sets of marks that appear side by side in one chart and must stay distinguishable. */
export const SIDE_BY_SIDE: Record<string, Record<string, string>> = {
	'mass share': {
		stored: meaning.state.stored.mark,
		earmarked: meaning.state.earmarked.mark,
		'out with labs': meaning.state.on_loan.mark,
		consumed: meaning.state.consumed.mark,
		lost: meaning.state.lost.mark,
		'split losses': meaning.loss.mark
	},
	'blank chart': {
		blank: meaning.blank.mark,
		sample: meaning.sample.mark,
		LOD: meaning.flag.below_lod.mark,
		LOQ: meaning.flag.below_loq.mark
	},
	'ee chart': { 'L-excess': meaning.excess.L.mark, 'D-excess': meaning.excess.D.mark, axis: meaning.chart.ink },
	ledger: { mass: meaning.sample.mark, 'split loss': meaning.loss.mark, 'uncertainty band': meaning.chart.band },
	'handling timeline': Object.fromEntries(Object.entries(ATMOSPHERE_COLOURS).map(([k, v]) => [k, v.fill]))
};

/** Colours as Tailwind nests them: a name holds a colour or more names. */
export interface ColourTree {
	[name: string]: string | ColourTree;
}

/** The theme's colours for tailwind.config.ts: the scales, and the meanings as `state-stored`, `state-stored-tint`, … */
export function themeColours(): ColourTree {
	const tone = (t: Tone) => ({ DEFAULT: t.mark, tint: t.tint, text: t.text });
	const group = (g: Record<string, Tone>) => Object.fromEntries(Object.entries(g).map(([k, t]) => [k.replace(/_/g, '-'), tone(t)]));
	return {
		...scales,
		state: group(meaning.state),
		loss: tone(meaning.loss),
		flag: group(meaning.flag),
		blank: tone(meaning.blank),
		sample: tone(meaning.sample),
		excess: group(meaning.excess),
		chart: { ...meaning.chart }
	};
}
