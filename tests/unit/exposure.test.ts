import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import {
	ATMOSPHERES,
	ExposureInputError,
	exposure,
	unionLength,
	type Atmosphere,
	type CollectionRules,
	type HandlingSessionInput,
	type Lineage
} from '../../src/lib/domain/exposure';

const at = (iso: string) => `2031-03-${iso}Z`;

// Worked example (DESIGN §3.5–3.6), computed by hand below. Hollins Ford main mass HLF-P, its
// aliquot HLF-A split off on 10 March at 10:30, and HLF-G split off HLF-A on 12 March at 14:00.
// We ask for the exposure of the grandchild HLF-G.
const lineage: Lineage = {
	itemId: 'HLF-G',
	ancestors: [
		{ itemId: 'HLF-A', childSplitAt: at('12T14:00:00') },
		{ itemId: 'HLF-P', childSplitAt: at('10T10:30:00') }
	]
};
const rules: CollectionRules = {
	allowedAtmospheres: ['nitrogen_glovebox', 'argon_glovebox', 'cleanroom_air', 'ambient_air'],
	maxAmbientAirMinutes: 10
};
const s = (id: string, atmosphere: Atmosphere, start: string, end: string, itemIds: string[], blanks: [string, boolean][] = []): HandlingSessionInput => ({
	id,
	atmosphere,
	start: at(start),
	end: at(end),
	itemIds,
	blanks: blanks.map(([blankId, analysed]) => ({ blankId, analysed }))
});
const sessions: HandlingSessionInput[] = [
	// on the parent specimen, straddling HLF-A's split at 10:30: counts 09:00–10:30 = 90 min
	s('S1', 'nitrogen_glovebox', '10T09:00:00', '10T11:00:00', ['HLF-P'], [['W1', true]]),
	// on the parent specimen after HLF-A left it: does not count
	s('S2', 'ambient_air', '10T12:00:00', '10T12:20:00', ['HLF-P']),
	// on the parent specimen the day before: 40 min, no blank
	s('S3', 'cleanroom_air', '09T15:00:00', '09T15:40:00', ['HLF-P']),
	// on HLF-A: 90 min, a witness coupon without an analysis yet
	s('S4', 'argon_glovebox', '11T08:00:00', '11T09:30:00', ['HLF-A'], [['W2', false]]),
	// on HLF-A, straddling HLF-G's split at 14:00: counts 13:45–14:00 = 15 min
	s('S5', 'ambient_air', '12T13:45:00', '12T14:30:00', ['HLF-A']),
	// the split session itself lists parent and child: it is HLF-G's own, 60 min
	s('S6', 'nitrogen_glovebox', '12T14:00:00', '12T15:00:00', ['HLF-A', 'HLF-G'], [['W3', true]]),
	// overlaps S6 by 30 min in the same class: the union 14:00–15:30 is 90 min, not 120
	s('S7', 'nitrogen_glovebox', '12T14:30:00', '12T15:30:00', ['HLF-G']),
	// vacuum is not allowed for this collection: 120 min, analysed blank
	s('S8', 'vacuum', '13T09:00:00', '13T11:00:00', ['HLF-G'], [['W4', true]]),
	// another item altogether: ignored
	s('S9', 'ambient_air', '12T10:00:00', '12T18:00:00', ['HLF-X'])
];

describe('exposure: worked example with three generations (DESIGN §3.5)', () => {
	const r = exposure(lineage, sessions, rules);

	it('counts own minutes per atmosphere as the union of own sessions', () => {
		// own: nitrogen S6 ∪ S7 = 14:00–15:30 = 90; vacuum S8 = 120
		expect(r.minutes.own).toEqual({ nitrogen_glovebox: 90, argon_glovebox: 0, cleanroom_air: 0, ambient_air: 0, vacuum: 120 });
	});

	it('counts inherited minutes only up to each split, clipping straddling sessions', () => {
		// inherited: nitrogen S1 clipped = 90; argon S4 = 90; cleanroom S3 = 40; ambient S5 clipped = 15; S2 left out
		expect(r.minutes.inherited).toEqual({ nitrogen_glovebox: 90, argon_glovebox: 90, cleanroom_air: 40, ambient_air: 15, vacuum: 0 });
		// total = own ∪ inherited per class: nitrogen 90 + 90 (disjoint days) = 180
		expect(r.minutes.total).toEqual({ nitrogen_glovebox: 180, argon_glovebox: 90, cleanroom_air: 40, ambient_air: 15, vacuum: 120 });
		// handling minutes: 40 + 90 + 90 + 15 + 90 + 120 = 445
		expect(r.handlingMinutes).toBe(445);
	});

	it('lists the counted sessions in time order with their generation and clipping', () => {
		expect(r.sessions.map((x) => [x.sessionId, x.itemId, x.generation, x.clipped, x.minutes])).toEqual([
			['S3', 'HLF-P', 2, false, 40],
			['S1', 'HLF-P', 2, true, 90],
			['S4', 'HLF-A', 1, false, 90],
			['S5', 'HLF-A', 1, true, 15],
			['S6', 'HLF-G', 0, false, 60],
			['S7', 'HLF-G', 0, false, 60],
			['S8', 'HLF-G', 0, false, 120]
		]);
		expect(r.sessions.find((x) => x.sessionId === 'S1')!.end.toISOString()).toBe('2031-03-10T10:30:00.000Z');
	});

	it('flags the vacuum session and the ambient-air minutes over the limit', () => {
		expect(r.violations).toEqual([
			expect.objectContaining({ kind: 'atmosphere-not-allowed', sessionId: 'S8', atmosphere: 'vacuum', inherited: false, minutes: 120 }),
			// 15 min inherited from HLF-A against a limit of 10
			expect.objectContaining({ kind: 'ambient-air-over-limit', minutes: 15, limitMinutes: 10, ownMinutes: 0, inheritedMinutes: 15 })
		]);
	});

	it('computes blank coverage and lists the uncovered sessions', () => {
		// covered: S1 (90, W1) + S6 (60, W3) + S8 (120, W4) = 270; S7's first half lies inside S6
		expect(r.coverage.coveredMinutes).toBe(270);
		// 270 / 445
		expect(r.coverage.share).toBeCloseTo(0.606742, 6);
		expect(r.coverage.uncovered.map((u) => [u.sessionId, u.reason, u.minutes])).toEqual([
			['S3', 'no-blank', 40],
			['S4', 'blank-not-analysed', 90],
			['S5', 'no-blank', 15],
			['S7', 'no-blank', 60]
		]);
		expect(r.overlaps).toEqual([]);
	});

	it('reports once the coupon of S4 gets its analysis', () => {
		const analysed = sessions.map((x) => (x.id === 'S4' ? { ...x, blanks: [{ blankId: 'W2', analysed: true }] } : x));
		const r2 = exposure(lineage, analysed, rules);
		// 270 + 90 = 360 of 445
		expect(r2.coverage.coveredMinutes).toBe(360);
		expect(r2.coverage.uncovered.map((u) => u.sessionId)).toEqual(['S3', 'S5', 'S7']);
	});
});

describe('exposure: rules, overlaps and bad input', () => {
	const one: Lineage = { itemId: 'TRN-1', ancestors: [] };

	it('flags every session in an atmosphere the collection does not allow, own or inherited', () => {
		const lin: Lineage = { itemId: 'TRN-2', ancestors: [{ itemId: 'TRN-1', childSplitAt: at('05T12:00:00') }] };
		const r = exposure(
			lin,
			[s('A', 'ambient_air', '05T10:00:00', '05T10:05:00', ['TRN-1']), s('B', 'nitrogen_glovebox', '06T10:00:00', '06T11:00:00', ['TRN-2'])],
			{ allowedAtmospheres: ['nitrogen_glovebox'], maxAmbientAirMinutes: 0 }
		);
		expect(r.violations.map((v) => v.kind)).toEqual(['atmosphere-not-allowed', 'ambient-air-over-limit']);
		expect(r.violations[0]).toMatchObject({ sessionId: 'A', inherited: true, itemId: 'TRN-1', generation: 1 });
	});

	it('has no violation at exactly the ambient-air limit', () => {
		const r = exposure(one, [s('A', 'ambient_air', '05T10:00:00', '05T10:10:00', ['TRN-1'])], rules);
		expect(r.minutes.total.ambient_air).toBe(10);
		expect(r.violations).toEqual([]);
	});

	it('lists two different atmospheres at the same time as an overlap, counting each in its class', () => {
		const r = exposure(
			one,
			[s('A', 'argon_glovebox', '05T10:00:00', '05T11:00:00', ['TRN-1']), s('B', 'vacuum', '05T10:40:00', '05T12:00:00', ['TRN-1'])],
			{ allowedAtmospheres: [...ATMOSPHERES], maxAmbientAirMinutes: null }
		);
		expect(r.overlaps).toEqual([{ a: 'A', b: 'B', atmospheres: ['argon_glovebox', 'vacuum'], minutes: 20 }]);
		expect(r.minutes.total.argon_glovebox).toBe(60);
		expect(r.minutes.total.vacuum).toBe(80);
		// 10:00–12:00 wall clock
		expect(r.handlingMinutes).toBe(120);
	});

	it('merges one session listed once per item, and refuses a session id with two different times', () => {
		const a = s('A', 'vacuum', '05T10:00:00', '05T11:00:00', ['TRN-1'], [['W', false]]);
		const r = exposure(one, [a, { ...a, itemIds: ['TRN-9'], blanks: [{ blankId: 'W9', analysed: true }] }], rules);
		expect(r.sessions).toHaveLength(1);
		expect(r.sessions[0].analysedBlanks).toEqual(['W9']);
		expect(() => exposure(one, [a, { ...a, end: at('05T11:01:00') }], rules)).toThrow(ExposureInputError);
	});

	it('refuses a session that ends before it starts, naming the field', () => {
		const bad = s('A', 'vacuum', '05T11:00:00', '05T10:00:00', ['TRN-1']);
		expect(() => exposure(one, [bad], rules)).toThrow(expect.objectContaining({ field: 'sessions.0.end' }));
	});

	it('refuses an unknown atmosphere, an unreadable time and an item twice in its lineage', () => {
		const bad = { ...s('A', 'vacuum', '05T10:00:00', '05T11:00:00', ['TRN-1']), atmosphere: 'helium' as Atmosphere };
		expect(() => exposure(one, [bad], rules)).toThrow(/unknown atmosphere/);
		expect(() => exposure(one, [{ ...bad, atmosphere: 'vacuum', start: 'yesterday' }], rules)).toThrow(/not a valid time/);
		const loop: Lineage = { itemId: 'X', ancestors: [{ itemId: 'X', childSplitAt: 0 }] };
		expect(() => exposure(loop, [], rules)).toThrow(/twice/);
	});

	it('gives no coverage share when there is nothing to cover', () => {
		const r = exposure(one, [], rules);
		expect(r.handlingMinutes).toBe(0);
		expect(r.coverage.share).toBeNull();
	});
});

// ── properties ────────────────────────────────────────────────────────────────────────────────
// Times are whole minutes from an origin, so a minute-by-minute count is an exact oracle.
const MIN = 60_000;
const ITEMS = ['G0', 'G1', 'G2', 'G3'];

const world = fc
	.record({
		generations: fc.integer({ min: 1, max: 4 }),
		// gaps between successive splits, root first
		splitGaps: fc.array(fc.integer({ min: 1, max: 300 }), { minLength: 3, maxLength: 3 }),
		sessions: fc.array(
			fc.record({
				item: fc.integer({ min: 0, max: 4 }), // 4: an unrelated item
				atmosphere: fc.constantFrom(...ATMOSPHERES),
				start: fc.integer({ min: 0, max: 1200 }),
				length: fc.integer({ min: 0, max: 300 }),
				blanks: fc.array(fc.boolean(), { maxLength: 2 })
			}),
			{ maxLength: 12 }
		)
	})
	.map(({ generations, splitGaps, sessions }) => {
		// item G0 is the one asked about; G(k) is its k-th ancestor; G(k-1) was split off G(k) at splitAt[k-1]
		let t = 0;
		const rootFirst = splitGaps.slice(0, generations - 1).map((g) => (t += g));
		const splitAt = rootFirst.reverse(); // splitAt[0]: G0 from G1 (latest), …
		const lin: Lineage = {
			itemId: 'G0',
			ancestors: splitAt.map((m, i) => ({ itemId: ITEMS[i + 1], childSplitAt: m * MIN }))
		};
		const list: HandlingSessionInput[] = sessions.map((x, i) => ({
			id: `S${i}`,
			atmosphere: x.atmosphere,
			start: x.start * MIN,
			end: (x.start + x.length) * MIN,
			itemIds: [x.item < generations ? ITEMS[x.item] : 'OTHER'],
			blanks: x.blanks.map((analysed, j) => ({ blankId: `B${i}.${j}`, analysed }))
		}));
		return { lin, list, splitAt, generations };
	});

const anyRules: CollectionRules = { allowedAtmospheres: [...ATMOSPHERES], maxAmbientAirMinutes: null };

/** Minute-by-minute oracle: is minute m counted for the item, per generation's cut-off? */
function oracle(w: { list: HandlingSessionInput[]; splitAt: number[]; generations: number }) {
	const cutoff = (g: number) => (g === 0 ? Infinity : Math.min(...w.splitAt.slice(0, g)));
	const counts = { handling: 0, covered: 0, inherited: 0, byClass: Object.fromEntries(ATMOSPHERES.map((a) => [a, 0])) as Record<Atmosphere, number> };
	for (let m = 0; m < 1600; m++) {
		const live = w.list.filter((x) => {
			const g = ITEMS.indexOf(x.itemIds[0]);
			if (g < 0 || g >= w.generations) return false;
			return (x.start as number) / MIN <= m && m < Math.min((x.end as number) / MIN, cutoff(g));
		});
		if (live.length) counts.handling++;
		if (live.some((x) => x.blanks!.some((b) => b.analysed))) counts.covered++;
		if (live.some((x) => x.itemIds[0] !== 'G0')) counts.inherited++;
		for (const a of ATMOSPHERES) if (live.some((x) => x.atmosphere === a)) counts.byClass[a]++;
	}
	return counts;
}

describe('exposure properties (fast-check)', () => {
	it('coverage is in [0, 1], and absent exactly when there are no handling minutes', () => {
		fc.assert(
			fc.property(world, (w) => {
				const r = exposure(w.lin, w.list, anyRules);
				if (r.handlingMinutes === 0) return r.coverage.share === null;
				return r.coverage.share !== null && r.coverage.share >= 0 && r.coverage.share <= 1;
			})
		);
	});

	it('minutes never exceed the wall-clock span of the union of counted sessions', () => {
		fc.assert(
			fc.property(world, (w) => {
				const r = exposure(w.lin, w.list, anyRules);
				const starts = r.sessions.map((x) => x.start.getTime());
				const ends = r.sessions.map((x) => x.end.getTime());
				const span = r.sessions.length ? (Math.max(...ends) - Math.min(...starts)) / MIN : 0;
				expect(r.handlingMinutes).toBeLessThanOrEqual(span);
				expect(r.handlingMinutes).toBe(unionLength(r.sessions.map((x) => [x.start.getTime(), x.end.getTime()])) / MIN);
				for (const a of ATMOSPHERES) {
					expect(r.minutes.total[a]).toBeLessThanOrEqual(r.handlingMinutes);
					expect(r.minutes.own[a]).toBeLessThanOrEqual(r.minutes.total[a]);
					expect(r.minutes.inherited[a]).toBeLessThanOrEqual(r.minutes.total[a]);
					expect(r.minutes.total[a]).toBeLessThanOrEqual(r.minutes.own[a] + r.minutes.inherited[a]);
				}
			})
		);
	});

	it('inherited minutes never include time after the split', () => {
		fc.assert(
			fc.property(world, fc.integer({ min: 0, max: 500 }), fc.constantFrom(...ATMOSPHERES), (w, late, atmosphere) => {
				const r = exposure(w.lin, w.list, anyRules);
				for (const x of r.sessions.filter((y) => y.inherited)) {
					const cutoff = Math.min(...w.splitAt.slice(0, x.generation)) * MIN;
					expect(x.end.getTime()).toBeLessThanOrEqual(cutoff);
				}
				// a session on an ancestor that starts at or after the split changes nothing
				if (w.generations < 2) return;
				const g = 1 + (late % (w.generations - 1));
				const cut = Math.min(...w.splitAt.slice(0, g)) * MIN;
				const extra: HandlingSessionInput = { id: 'LATE', atmosphere, start: cut + late * MIN, end: cut + (late + 90) * MIN, itemIds: [ITEMS[g]] };
				const r2 = exposure(w.lin, [...w.list, extra], anyRules);
				expect(r2.minutes).toEqual(r.minutes);
				expect(r2.coverage).toEqual(r.coverage);
			})
		);
	});

	it('agrees with a minute-by-minute count', () => {
		fc.assert(
			fc.property(world, (w) => {
				const r = exposure(w.lin, w.list, anyRules);
				const o = oracle(w);
				expect(r.handlingMinutes).toBe(o.handling);
				expect(r.coverage.coveredMinutes).toBe(o.covered);
				expect(r.minutes.total).toEqual(o.byClass);
				expect(unionLength(r.sessions.filter((x) => x.inherited).map((x) => [x.start.getTime(), x.end.getTime()])) / MIN).toBe(o.inherited);
			})
		);
	});
});
