import { z } from 'zod';
import { ATMOSPHERES } from '../../domain/exposure';
import { micrograms } from '../registry/common';
import { note } from './common';

/** The offer's filters as a request keeps them (domain/offer.ts OfferConstraints). */
export const constraintsInput = z.strictObject({
	minMassUg: micrograms().optional(),
	neverAmbient: z.boolean({ error: 'must be true or false' }).optional(),
	maxMinutes: z.partialRecord(z.enum(ATMOSPHERES, { error: `must be one of ${ATMOSPHERES.join(', ')}` }), z.number({ error: 'must be minutes' }).min(0, 'cannot be negative').max(1_000_000, 'is too large')).optional(),
	minCoverage: z.number({ error: 'must be a share from 0 to 1' }).min(0, 'must be from 0 to 1').max(1, 'must be from 0 to 1').optional(),
	kind: z.enum(['specimen', 'aliquot'], { error: 'must be specimen or aliquot' }).optional()
}, { error: 'must be an object of offer filters' });

export const requestInput = z.strictObject({
	collection: z.string({ error: 'must be a collection prefix such as TRN' }).trim().toUpperCase().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix such as TRN'),
	massUg: micrograms(),
	analysisPlan: note(4000).default(''),
	techniques: z.array(note(80).min(1, 'must not be empty'), { error: 'must be a list of technique names' }).max(12, 'at most 12 techniques').default([]),
	destructive: z.boolean({ error: 'must be true or false' }),
	expectedConsumptionUg: micrograms({ allowZero: true }).optional(),
	returnPlan: note(2000).default(''),
	justification: note(4000).default(''),
	pieces: z.number({ error: 'must be a whole number of pieces' }).int('must be a whole number of pieces').min(1, 'at least 1 piece').max(12, 'at most 12 pieces').default(1),
	constraints: constraintsInput.default({}),
	itemCodes: z.array(z.string({ error: 'must be an item code' }).trim().min(1, 'must not be empty'), { error: 'must be a list of item codes' }).max(20, 'at most 20 items').default([]),
	submit: z.boolean({ error: 'must be true or false' }).optional()
});
type RequestFields = z.infer<typeof requestInput>;
/** A request as the services take it: pieces, constraints and items may be left out (one piece, none, none). */
export type RequestInput = Omit<RequestFields, 'pieces' | 'constraints' | 'itemCodes'> & Partial<Pick<RequestFields, 'pieces' | 'constraints' | 'itemCodes'>>;

export const grantInput = z.strictObject({
	grantedUg: micrograms(),
	note: note(2000).optional(),
	overrideReason: note(2000).min(10, 'must say in at least 10 characters why the reserve may be cut into').optional()
});
export const declineInput = z.strictObject({ reason: note(2000).min(5, 'is required: tell the lab why (at least 5 characters)') });
export const earmarkInput = z.strictObject({ itemCode: z.string({ error: 'must be an item code' }) });

export const listRequestsQuery = z.strictObject({
	state: z.enum(['draft', 'submitted', 'in_review', 'granted', 'declined', 'fulfilled', 'closed', 'withdrawn', 'open'], { error: 'is not a request state' }).optional(),
	collection: z.string().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix').optional(),
	lab: z.string().uuid('must be a lab id').optional()
});

