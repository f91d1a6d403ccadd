/** What a transfer is prepared and signed with: coolants, and the checked input of the API and forms. */
import { z } from 'zod';
import { note } from './common';

export const COOLANTS = {
	none: 'None (ambient)',
	cold_packs: 'Cold packs',
	dry_ice: 'Dry ice (solid CO₂)',
	dry_shipper: 'Liquid-nitrogen dry shipper'
} as const;
export type Coolant = keyof typeof COOLANTS;

/**
 * The largest net mass of dry ice taken, in kg: a bound against typing errors (a misplaced
 * decimal point), not a transport limit; the carrier's rules set those.
 */
export const MAX_DRY_ICE_KG = 500;

/** "2.5 kg" from whole grams. */
export const dryIceText = (g: number) => `${(g / 1000).toLocaleString('en-GB', { maximumFractionDigits: 3 })} kg`;

/**
 * The net mass of dry ice in kg (a JSON number, or the text of a form field; "2.5" or "2,5"),
 * read exactly into whole grams. Empty: not given.
 */
const dryIceKg = z.unknown().transform((v, ctx): number | undefined => {
	const fail = (message: string) => {
		ctx.addIssue({ code: 'custom', message });
		return z.NEVER;
	};
	if (v === undefined || v === null || (typeof v === 'string' && v.trim() === '')) return undefined;
	let text: string;
	if (typeof v === 'number') {
		if (!Number.isFinite(v)) return fail(`must be a mass in kg, got ${v}`);
		text = String(v);
	} else if (typeof v === 'string') text = v.trim().replace(',', '.');
	else return fail('must be a mass in kg, e.g. 2.5');
	const m = /^(\d+)(?:\.(\d{1,3}))?$/.exec(text);
	if (!m) return fail(`"${String(v).slice(0, 20)}" is not a net mass in kg with at most 3 decimals (whole grams), e.g. 2.5`);
	const grams = Number(m[1]) * 1000 + Number((m[2] ?? '').padEnd(3, '0'));
	if (grams <= 0) return fail('must be more than 0 kg');
	if (grams > MAX_DRY_ICE_KG * 1000) return fail(`is more than ${MAX_DRY_ICE_KG} kg: check the decimal point`);
	return grams;
});

export const prepareInput = z
	.strictObject({
		requestId: z.string({ error: 'must be a request id' }).uuid('must be a request id').optional(),
		itemCodes: z.array(z.string({ error: 'must be an item code' }), { error: 'must be a list of item codes' }).min(1, 'name at least one item').max(100, 'at most 100 items per transfer').optional(),
		container: note(200).min(1, 'is required: describe the container'),
		seal: note(120).default(''),
		atmosphere: note(80).default(''),
		temperature: note(80).default(''),
		coolant: z.enum(['none', 'cold_packs', 'dry_ice', 'dry_shipper'], { error: 'must be none, cold_packs, dry_ice or dry_shipper' }).default('none'),
		/** net mass of dry ice in kg; becomes `dryIceNetG`, whole grams */
		dryIceKg: dryIceKg.optional(),
		carrier: note(120).default(''),
		trackingRef: note(120).default(''),
		expectedArrival: z.string({ error: 'must be a date' }).regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date as YYYY-MM-DD').optional(),
		note: note(2000).default('')
	})
	.superRefine((x, ctx) => {
		if (x.coolant === 'dry_ice' && x.dryIceKg === undefined) {
			ctx.addIssue({ code: 'custom', path: ['dryIceKg'], message: 'is required with dry ice: the net mass of dry ice in kg, as the carrier declares it' });
		}
		if (x.coolant !== 'dry_ice' && x.dryIceKg !== undefined) {
			ctx.addIssue({ code: 'custom', path: ['dryIceKg'], message: `is only recorded with dry ice as coolant, not with ${COOLANTS[x.coolant].toLowerCase()}` });
		}
	})
	// taken in kg, kept in whole grams
	.transform(({ dryIceKg: grams, ...rest }) => ({ ...rest, dryIceNetG: grams ?? null }));
export type PrepareInput = z.output<typeof prepareInput>;

export const signInput = z.strictObject({
	meaning: z.enum(['dispatched', 'received_intact', 'received_damaged', 'refused', 'returned_to_sender'], { error: 'must be dispatched, received_intact, received_damaged, refused or returned_to_sender' }),
	password: z.string({ error: 'is required: re-enter your password to sign' }).min(1, 'is required: re-enter your password to sign').max(1024),
	note: note(2000).default('')
});

export const listTransfersQuery = z.strictObject({
	state: z.enum(['prepared', 'dispatched', 'received', 'refused', 'cancelled'], { error: 'is not a transfer state' }).optional(),
	direction: z.enum(['outbound', 'return'], { error: 'must be outbound or return' }).optional()
});
