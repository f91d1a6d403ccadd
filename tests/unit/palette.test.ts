import { describe, it, expect } from 'vitest';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { converter, differenceCiede2000, filterDeficiencyDeuter, filterDeficiencyProt, filterDeficiencyTrit, wcagContrast, type Color } from 'culori';
import resolveConfig from 'tailwindcss/resolveConfig';
import tailwindConfig from '../../tailwind.config';
import { meaning, scales, SIDE_BY_SIDE, themeColours, type Tone } from '../../src/lib/components/palette';
import { STATE_BADGE, STATE_LABELS, stateBadge } from '../../src/lib/vocabulary';

const lrgb = converter('lrgb');
const rgb = converter('rgb');

/**
 * Dichromat vision after Machado, Oliveira & Fernandes, "A physiologically-based model for
 * simulation of color vision deficiency", IEEE TVCG 15(6) 2009, severity 1.0, with the matrices
 * that culori ships. The paper's matrices act on linear RGB; culori's filters apply them to the
 * components they are given, so the colour goes in as linear RGB and comes out as linear RGB.
 */
function simulate(kind: 'protanopia' | 'deuteranopia' | 'tritanopia', hex: string): Color {
	const f = { protanopia: filterDeficiencyProt(1), deuteranopia: filterDeficiencyDeuter(1), tritanopia: filterDeficiencyTrit(1) }[kind];
	const lin = lrgb(hex)!;
	const out = f({ mode: 'rgb', r: lin.r, g: lin.g, b: lin.b }) as { r: number; g: number; b: number };
	const clamp = (v: number) => Math.min(1, Math.max(0, v));
	return rgb({ mode: 'lrgb', r: clamp(out.r), g: clamp(out.g), b: clamp(out.b) })!;
}
const VISIONS = ['protanopia', 'deuteranopia', 'tritanopia'] as const;
const dE = differenceCiede2000();

// Two marks side by side must differ by at least ΔE00 = 10 for every kind of vision. There is no
// published threshold for "told apart at a glance"; 10 is a common practice for categorical chart
// colours (ΔE00 ≈ 2 is a just-noticeable difference).
const MIN_DELTA_E = 10;

describe('the colour-vision model', () => {
	it('reproduces Machado et al. (2009), protanopia 1.0, for pure red', () => {
		// Machado et al. 2009, table of matrices, protanopia severity 1.0, first column:
		// 0.152286, 0.114503, −0.003882 (values typed from memory of the paper's table)
		const lin = lrgb(simulate('protanopia', '#ff0000'))!;
		expect(lin.r).toBeCloseTo(0.152286, 4);
		expect(lin.g).toBeCloseTo(0.114503, 4);
		expect(lin.b).toBeCloseTo(0, 4); // −0.003882 clamped to the gamut
	});
	it('leaves grey grey (each row of the matrices sums to 1)', () => {
		for (const v of VISIONS) expect(dE(simulate(v, '#777777'), rgb('#777777')!)).toBeLessThan(1);
	});
});

describe('meaning colours stay distinguishable with colour-blind vision', () => {
	for (const [chart, set] of Object.entries(SIDE_BY_SIDE)) {
		for (const vision of ['typical', ...VISIONS] as const) {
			it(`${chart}, ${vision}`, () => {
				const names = Object.keys(set);
				const seen = (hex: string) => (vision === 'typical' ? rgb(hex)! : simulate(vision, hex));
				for (let i = 0; i < names.length; i++)
					for (let j = i + 1; j < names.length; j++) {
						const d = dE(seen(set[names[i]]), seen(set[names[j]]));
						expect(d, `${names[i]} vs ${names[j]}: ΔE00 ${d.toFixed(1)}`).toBeGreaterThanOrEqual(MIN_DELTA_E);
					}
			});
		}
	}

	it('would catch a red and a green that only typical vision tells apart', () => {
		// a check that could fail: the classic red/green pair collapses under deuteranopia
		expect(dE(simulate('deuteranopia', '#d62728'), simulate('deuteranopia', '#2ca02c'))).toBeLessThan(MIN_DELTA_E);
	});
});

describe('contrast (WCAG 2.1)', () => {
	const tones: [string, Tone][] = [
		...Object.entries(meaning.state).map(([k, t]) => [`state ${k}`, t] as [string, Tone]),
		['loss', meaning.loss],
		...Object.entries(meaning.flag).map(([k, t]) => [`flag ${k}`, t] as [string, Tone]),
		['blank', meaning.blank],
		['sample', meaning.sample],
		...Object.entries(meaning.excess).map(([k, t]) => [`excess ${k}`, t] as [string, Tone])
	];
	it('every badge text reads at 4.5:1 on its tint (SC 1.4.3) and every mark shows at 3:1 on white (SC 1.4.11)', () => {
		for (const [name, t] of tones) {
			expect(wcagContrast(t.text, t.tint), `${name} text on tint`).toBeGreaterThanOrEqual(4.5);
			expect(wcagContrast(t.mark, '#ffffff'), `${name} mark on white`).toBeGreaterThanOrEqual(3);
		}
	});
	it("a chart's words read at 4.5:1 on white", () => {
		for (const c of [meaning.chart.ink, meaning.chart.muted, meaning.excess.L.text, meaning.excess.D.text, meaning.flag.below_lod.text, meaning.flag.below_loq.text])
			expect(wcagContrast(c, '#ffffff')).toBeGreaterThanOrEqual(4.5);
		expect(wcagContrast(meaning.chart.axis, '#ffffff')).toBeGreaterThanOrEqual(3);
	});
	it('the worked example of WCAG 2.1: black on white is 21:1', () => {
		// WCAG 2.1, definition of contrast ratio: (L1 + 0.05)/(L2 + 0.05) = 1.05/0.05
		expect(wcagContrast('#000000', '#ffffff')).toBeCloseTo(21, 6);
	});
});

describe('one palette for pages, badges and charts', () => {
	const theme = resolveConfig(tailwindConfig).theme.colors as unknown as Record<string, Record<string, Record<string, string> | string>>;
	/** The colour a Tailwind colour class names, looked up in the resolved theme: bg-state-stored-tint → theme.state.stored.tint. */
	function colourOf(cls: string): string {
		const name = cls.replace(/^(bg|text|fill|stroke|border)-/, '');
		const parts = name.split('-');
		// try every split of the name into group / key / shade, as Tailwind flattens nested colours
		for (let i = 1; i <= parts.length; i++) {
			const g = theme[parts.slice(0, i).join('-')];
			if (!g) continue;
			if (i === parts.length) return typeof g === 'string' ? g : (g as Record<string, string>).DEFAULT;
			for (let j = i + 1; j <= parts.length; j++) {
				const v = (g as Record<string, Record<string, string> | string>)[parts.slice(i, j).join('-')];
				if (v === undefined) continue;
				if (j === parts.length) return typeof v === 'string' ? v : v.DEFAULT;
				if (typeof v !== 'string' && v[parts.slice(j).join('-')]) return v[parts.slice(j).join('-')];
			}
		}
		throw new Error(`no theme colour for ${cls}`);
	}

	it("Tailwind's theme holds the palette's scales and meanings", () => {
		expect(themeColours().basalt).toEqual(scales.basalt);
		expect(colourOf('fill-state-stored')).toBe(meaning.state.stored.mark);
		expect(colourOf('bg-state-in-transit-tint')).toBe(meaning.state.in_transit.tint);
		expect(colourOf('fill-excess-L')).toBe(meaning.excess.L.mark);
		expect(colourOf('stroke-chart-rule')).toBe(meaning.chart.rule);
		expect(colourOf('text-tarn-700')).toBe(scales.tarn[700]);
	});

	it('every item state has a badge whose tint and words are the palette pair for it, and it reads', () => {
		for (const state of Object.keys(STATE_LABELS)) {
			const cls = stateBadge(state).split(' ');
			const bg = colourOf(cls.find((c) => c.startsWith('bg-'))!);
			const fg = colourOf(cls.find((c) => c.startsWith('text-'))!);
			const tone = meaning.state[state as keyof typeof meaning.state];
			expect(bg).toBe(tone.tint);
			expect(fg).toBe(tone.text);
			expect(wcagContrast(fg, bg), state).toBeGreaterThanOrEqual(4.5);
		}
		expect(Object.keys(STATE_BADGE).sort()).toEqual(Object.keys(STATE_LABELS).sort());
	});

	it('no component or page carries colour literals of its own: the charts, the timeline, progress bars and the mark take the palette', () => {
		const files: string[] = [];
		const walk = (dir: string) => {
			for (const e of readdirSync(dir, { withFileTypes: true })) {
				if (e.isDirectory()) walk(join(dir, e.name));
				else if (e.name.endsWith('.svelte')) files.push(join(dir, e.name));
			}
		};
		walk(join(process.cwd(), 'src'));
		expect(files.filter((f) => /Chart.*\.svelte$/.test(f)).length).toBeGreaterThanOrEqual(5);
		expect(files.some((f) => f.endsWith('HandlingPanel.svelte'))).toBe(true);
		for (const f of files) {
			const src = readFileSync(f, 'utf8');
			expect(src.match(/#[0-9a-fA-F]{3,8}\b|rgba?\(|hsla?\(/g), f).toBeNull();
		}
	});
});
