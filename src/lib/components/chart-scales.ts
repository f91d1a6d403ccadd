/**
 * Scales, ticks and tick labels for Regolog's charts, on d3-scale's linear, logarithmic and UTC
 * time scales ("nice" steps of 1, 2 or 5 × 10ⁿ). Pure and client-safe: the chart components
 * render what these return, and tests/unit/chart-scales.test.ts checks them directly.
 */
import { scaleLinear, scaleLog, scaleUtc, type ScaleLinear, type ScaleLogarithmic, type ScaleTime } from 'd3-scale';
import { format, precisionFixed } from 'd3-format';
import { utcFormat } from 'd3-time-format';
import { utcDay, utcMinute, utcMonth, utcYear } from 'd3-time';

export interface Tick {
	value: number;
	label: string;
	/** a minor tick: drawn as a grid line, not labelled */
	minor?: boolean;
}

export type MassUnit = 'µg' | 'mg' | 'g';
const UG_PER: Record<MassUnit, number> = { µg: 1, mg: 1000, g: 1_000_000 };

/** The unit a mass axis reads in: µg below 1 mg, mg below 10 g (as the item pages show masses), g above. */
export function massUnit(maxAbsUg: number): MassUnit {
	const a = Math.abs(maxAbsUg);
	return a < 1000 ? 'µg' : a < 10_000_000 ? 'mg' : 'g';
}

/** The step between neighbouring ticks (ticks are multiples of it). */
export function tickStep(ticks: readonly number[]): number {
	// a nice step is 1, 2 or 5 × 10ⁿ: six significant digits drop the rounding error of the subtraction
	return ticks.length > 1 ? Number(Math.abs(ticks[1] - ticks[0]).toPrecision(6)) : 0;
}

/** Drops the binary rounding error of a decimal value (2184.0000000000005 → 2184), keeping 12 significant digits. */
export function clean(x: number): number {
	return x === 0 ? 0 : Number(x.toPrecision(12));
}

/** Formats values that are multiples of `step` with just the decimals the step needs. */
export function stepFormat(step: number, suffix = ''): (v: number) => string {
	const f = format(`.${step > 0 ? precisionFixed(step) : 0}f`);
	return (v) => `${f(v).replace('-', '−')}${suffix}`;
}

export interface LinearAxis {
	scale: ScaleLinear<number, number>;
	ticks: Tick[];
}

/** A linear scale over `domain`, widened to nice round ends, with about `count` labelled ticks. */
export function linearAxis(domain: [number, number], range: [number, number], count = 5, label: (step: number) => (v: number) => string = (s) => stepFormat(s)): LinearAxis {
	let [lo, hi] = domain[0] <= domain[1] ? domain : [domain[1], domain[0]];
	if (lo === hi) {
		const pad = lo === 0 ? 1 : Math.abs(lo) * 0.05;
		lo -= pad;
		hi += pad;
	}
	const scale = scaleLinear().domain([lo, hi]).range(range).nice(count);
	const values = scale.ticks(count);
	const f = label(tickStep(values));
	return { scale, ticks: values.map((value) => ({ value, label: f(value) })) };
}

export interface MassAxis extends LinearAxis {
	unit: MassUnit;
	/** a mass in µg with the axis's unit and precision */
	format: (ug: number) => string;
}

/**
 * A linear mass axis over masses in µg: round steps in the unit it reads in (so 1881.785 mg to
 * 2266.388 mg reads 1900, 2000, … 2300 mg), labelled with the decimals the step needs.
 */
export function massAxis(domainUg: [number, number], range: [number, number], count = 5): MassAxis {
	const unit = massUnit(Math.max(Math.abs(domainUg[0]), Math.abs(domainUg[1])));
	const k = UG_PER[unit];
	const inUnit = linearAxis([domainUg[0] / k, domainUg[1] / k], range, count, (s) => stepFormat(s, ` ${unit}`));
	const scale = inUnit.scale.copy().domain(inUnit.scale.domain().map((v) => clean(v * k)));
	const step = tickStep(inUnit.ticks.map((t) => t.value));
	const f = stepFormat(step, ` ${unit}`);
	return { scale, unit, ticks: inUnit.ticks.map((t) => ({ value: clean(t.value * k), label: t.label })), format: (ug) => f(ug / k) };
}

export interface LogAxis {
	scale: ScaleLogarithmic<number, number>;
	ticks: Tick[];
}

/** Powers of ten from 10^floor(log10 lo) to 10^ceil(log10 hi), computed exactly (1e-3, not 0.0010000000000000002). */
export function decades(lo: number, hi: number): number[] {
	if (!(lo > 0) || !(hi > 0)) throw new RangeError(`a logarithmic axis needs positive bounds, got ${lo} and ${hi}`);
	const a = Math.floor(Math.log10(Math.min(lo, hi)) + 1e-12);
	const b = Math.ceil(Math.log10(Math.max(lo, hi)) - 1e-12);
	const out: number[] = [];
	for (let e = a; e <= Math.max(b, a + 1); e++) out.push(Number(`1e${e}`));
	return out;
}

/** Labels a power of ten as a plain number where it is short (0.001 … 100 000), else as 10ⁿ. */
export function decadeLabel(v: number): string {
	const e = Math.round(Math.log10(v));
	if (e >= -3 && e <= 5) return format(`.${Math.max(0, -e)}f`)(v);
	const sup: Record<string, string> = { '-': '⁻', 0: '⁰', 1: '¹', 2: '²', 3: '³', 4: '⁴', 5: '⁵', 6: '⁶', 7: '⁷', 8: '⁸', 9: '⁹' };
	return `10${String(e).replace(/./g, (c) => sup[c])}`;
}

/**
 * A base-10 logarithmic scale whose domain is whole decades around the values; every decade is a
 * labelled tick, and 2…9 × 10ⁿ are minor ticks while the axis spans at most four decades.
 */
export function logAxis(domain: [number, number], range: [number, number], label: (v: number) => string = decadeLabel): LogAxis {
	const ds = decades(domain[0], domain[1]);
	const scale = scaleLog().domain([ds[0], ds[ds.length - 1]]).range(range);
	const ticks: Tick[] = [];
	for (let i = 0; i < ds.length; i++) {
		ticks.push({ value: ds[i], label: label(ds[i]) });
		if (i < ds.length - 1 && ds.length <= 5) for (let m = 2; m <= 9; m++) ticks.push({ value: m * ds[i], label: '', minor: true });
	}
	return { scale, ticks };
}

/** Whether values in a chart span so many decades that a logarithmic axis reads better (two decades or more). */
export function wantsLog(values: readonly number[]): boolean {
	const positive = values.filter((v) => v > 0);
	if (positive.length < 2) return false;
	return Math.max(...positive) / Math.min(...positive) >= 100;
}

export interface TimeAxis {
	scale: ScaleTime<number, number>;
	ticks: Tick[];
	/** the UTC day ("3 Feb 2026") when the whole axis lies within it, since its ticks then show times only */
	day: string | null;
}

const fmtMinute = utcFormat('%H:%M');
const fmtDay = utcFormat('%d %b');
const fmtMonth = utcFormat('%b %Y');
const fmtYear = utcFormat('%Y');

/** A tick label in UTC: a time within a day, the day at midnight, the month at its first day, the year at its start. */
export function utcTickLabel(d: Date): string {
	if (utcMinute(d) < d) return utcFormat('%H:%M:%S')(d);
	if (utcDay(d) < d) return fmtMinute(d);
	if (utcMonth(d) < d) return fmtDay(d);
	if (utcYear(d) < d) return fmtMonth(d);
	return fmtYear(d);
}

/** A UTC time scale over ISO instants, padded so a single instant still has an axis; ticks at d3's round UTC intervals. */
export function timeAxis(instants: readonly string[], range: [number, number], count = 6): TimeAxis {
	const ms = instants.map((s) => Date.parse(s)).filter((t) => Number.isFinite(t));
	if (!ms.length) throw new RangeError('a time axis needs at least one valid instant');
	let lo = Math.min(...ms);
	let hi = Math.max(...ms);
	const pad = Math.max((hi - lo) * 0.04, 30 * 60_000);
	lo -= pad;
	hi += pad;
	const scale = scaleUtc().domain([new Date(lo), new Date(hi)]).range(range);
	const day = utcDay.floor(new Date(lo)).getTime() === utcDay.floor(new Date(hi)).getTime() ? utcFormat('%-d %b %Y')(new Date(lo)) : null;
	return { scale, ticks: scale.ticks(count).map((d) => ({ value: d.getTime(), label: utcTickLabel(d) })), day };
}

/** "2026-03-04 09:12 UTC" */
export const utcMinuteLabel = utcFormat('%Y-%m-%d %H:%M UTC');

/** A symmetric percent axis for a signed fraction (ee), about `count` ticks, 0 % in the middle. */
export function percentAxis(maxAbs: number, range: [number, number], count = 6): LinearAxis {
	const m = Math.max(maxAbs, 0.01);
	return linearAxis([-m, m], range, count, (step) => {
		const f = format(`.${precisionFixed(step * 100)}f`);
		return (v) => `${f(v * 100).replace('-', '−')} %`;
	});
}

/** A power of ten in µg as a mass: 0.1 µg, 1 µg, … 100 µg, 1 mg, … 100 mg, 1 g, … 100 g, 1 kg … */
export function massDecadeLabel(ug: number): string {
	const [unit, per] = ug < 1000 ? ['µg', 1] : ug < 1e6 ? ['mg', 1e3] : ug < 1e9 ? ['g', 1e6] : ['kg', 1e9];
	const v = ug / per;
	return `${format(`.${Math.max(0, -Math.floor(Math.log10(v) + 1e-9))}f`)(v)} ${unit}`;
}

/**
 * Places marks at least `gap` apart along one axis, each as near its own position as it can be:
 * marks that would crowd each other form a run centred on their mean position, and runs are kept
 * inside [lo, hi]. Positions must be in ascending order; the order is kept. (Used where several
 * ledger entries share one instant: each keeps a leader line to its true time.)
 */
export function dodge(positions: readonly number[], gap: number, lo: number, hi: number): number[] {
	const n = positions.length;
	if (!n) return [];
	const g = n > 1 ? Math.min(gap, (hi - lo) / (n - 1)) : gap;
	type Run = { first: number; n: number; sum: number; centre: number };
	const place = (r: Run) => {
		const half = ((r.n - 1) / 2) * g;
		r.centre = Math.min(Math.max(r.sum / r.n, lo + half), hi - half);
	};
	const runs: Run[] = [];
	for (let i = 0; i < n; i++) {
		const r: Run = { first: i, n: 1, sum: positions[i], centre: positions[i] };
		place(r);
		runs.push(r);
		// merge with the run before while the two would overlap
		while (runs.length > 1) {
			const b = runs[runs.length - 1];
			const a = runs[runs.length - 2];
			if (a.centre + ((a.n - 1) / 2) * g + g <= b.centre - ((b.n - 1) / 2) * g + 1e-9) break;
			runs.splice(runs.length - 2, 2, { first: a.first, n: a.n + b.n, sum: a.sum + b.sum, centre: 0 });
			place(runs[runs.length - 1]);
		}
	}
	const out: number[] = [];
	for (const r of runs) for (let k = 0; k < r.n; k++) out.push(r.centre + (k - (r.n - 1) / 2) * g);
	return out;
}
