import { z } from 'zod';

// Control characters, bidirectional overrides and zero-width characters make a record read
// differently from what it stores; names and labels refuse them.
const TRICKY = /[\u0000-\u001f\u007f-\u009f\u200b-\u200f\u202a-\u202e\u2060-\u2064\u2066-\u2069\ufeff]/u;

/** Plain single-line text of bounded length, NFC-normalised, with no invisible or direction-changing characters. */
export function plainText(label: string, min: number, max: number) {
	return z
		.string({ error: `${label} must be text.` })
		.transform((s) => s.normalize('NFC').trim())
		.pipe(
			z
				.string()
				.min(min, min <= 1 ? `${label} is required.` : `${label} needs at least ${min} characters.`)
				.max(max, `${label} has at most ${max} characters.`)
				.refine((s) => !TRICKY.test(s), `${label} contains invisible or control characters.`)
		);
}

/** Longer text (notes, plans) that may span lines but holds no other control characters. */
export function noteText(label: string, max: number) {
	return z
		.string({ error: `${label} must be text.` })
		.transform((s) => s.normalize('NFC').trim())
		.pipe(
			z
				.string()
				.max(max, `${label} has at most ${max} characters.`)
				.refine((s) => !/[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f\u202a-\u202e\u2066-\u2069]/u.test(s), `${label} contains control characters.`)
		);
}

export const emailField = z
	.string({ error: 'The e-mail address must be text.' })
	.transform((s) => s.normalize('NFKC').trim().toLowerCase())
	.pipe(
		z
			.string()
			.min(3, 'Enter an e-mail address.')
			.max(254, 'An e-mail address has at most 254 characters.')
			.email('Enter a valid e-mail address.')
			.refine((s) => !TRICKY.test(s), 'The e-mail address contains invisible characters.')
	);

export const uuidField = (label: string) => z.string({ error: `${label} must be text.` }).uuid(`${label} is not a valid id.`);
