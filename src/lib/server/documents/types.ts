// What Regolog stores as documents: their kinds, the allowed content types with their signatures,
// and the words for sizes in its messages.
import { ApiProblem } from '../api';

/** The kinds of document a lab or the facility attaches. */
export const DOCUMENT_KINDS = ['blank_control_report', 'chromatogram', 'photo', 'shipping_form', 'other'] as const;
export type DocumentKind = (typeof DOCUMENT_KINDS)[number];

/**
 * The facility's documents on an item on offer that every lab may read, so a scientist can judge a
 * piece before asking for it: its photos, chromatograms and other characterisation. Blank-control
 * reports and shipping forms stay with their lab or the facility.
 */
export const OFFER_DOCUMENT_KINDS: readonly DocumentKind[] = ['photo', 'chromatogram', 'other'];

const isText = (head: Uint8Array): boolean => {
	if (head.includes(0)) return false;
	try {
		new TextDecoder('utf-8', { fatal: true }).decode(head, { stream: true });
		return true;
	} catch {
		return false;
	}
};
const startsWith = (head: Uint8Array, ...bytes: number[]) => bytes.every((b, i) => head[i] === b);

/**
 * The content types Regolog stores, with the file endings that imply them and a cheap check of
 * the first bytes (the formats' own signatures: PDF "%PDF-", PNG's eight-byte signature, JPEG's
 * SOI marker, TIFF's byte-order header; text must be UTF-8 without NUL bytes).
 */
export const ALLOWED_TYPES: Record<string, { label: string; endings: string[]; sniff: (head: Uint8Array) => boolean }> = {
	'application/pdf': { label: 'PDF', endings: ['pdf'], sniff: (h) => startsWith(h, 0x25, 0x50, 0x44, 0x46, 0x2d) },
	'image/png': { label: 'PNG image', endings: ['png'], sniff: (h) => startsWith(h, 0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a) },
	'image/jpeg': { label: 'JPEG image', endings: ['jpg', 'jpeg'], sniff: (h) => startsWith(h, 0xff, 0xd8, 0xff) },
	'image/tiff': { label: 'TIFF image', endings: ['tif', 'tiff'], sniff: (h) => startsWith(h, 0x49, 0x49, 0x2a, 0x00) || startsWith(h, 0x4d, 0x4d, 0x00, 0x2a) },
	'text/csv': { label: 'CSV table', endings: ['csv'], sniff: isText },
	'text/plain': { label: 'plain text', endings: ['txt'], sniff: isText }
};

/** The content type of an upload: the declared one, or the file ending's when the browser declared none. */
export function contentTypeFor(declared: string | null, name: string): string {
	const type = (declared ?? '').split(';')[0].trim().toLowerCase();
	if (type && type !== 'application/octet-stream' && type !== 'application/vnd.ms-excel') {
		if (!ALLOWED_TYPES[type]) throw new ApiProblem(415, 'unsupported_media_type', `Files of type ${type} are not stored. Allowed: ${allowedList()}.`, { file: 'type not allowed' });
		return type;
	}
	const ending = name.toLowerCase().split('.').pop() ?? '';
	const found = Object.entries(ALLOWED_TYPES).find(([, t]) => t.endings.includes(ending));
	if (!found) throw new ApiProblem(415, 'unsupported_media_type', `"${name}" has no recognised type. Allowed: ${allowedList()}.`, { file: 'type not allowed' });
	return found[0];
}

export function allowedList(): string {
	return Object.values(ALLOWED_TYPES).map((t) => `${t.label} (.${t.endings.join(', .')})`).join(', ');
}

export function megabytes(bytes: number): string {
	return `${(bytes / 1024 / 1024).toFixed(bytes % (1024 * 1024) === 0 ? 0 : 1)} MB`;
}
