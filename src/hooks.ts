import type { Reroute } from '@sveltejs/kit';

/**
 * Item codes carry a slash before their check character (TRN-00042/G). Regolog writes it
 * percent-encoded in links and QR codes (/items/TRN-00042%2FG); a link whose slash was left as
 * it is (typed by hand, pasted from a label's text, written by another program) is routed to the
 * same item instead of a missing page: /items/TRN-00042/G, /items/TRN-00042/G/split,
 * /api/items/TRN-00042/G/lineage, /audit/items/…, /api/scan/….
 */
const UNENCODED = /^(\/(?:api\/)?(?:audit\/)?(?:items|scan)\/[A-Za-z]{2,5}-\d{5,})\/([0-9A-Za-z])(?=\/|$)/;

export const reroute: Reroute = ({ url }) => {
	const m = UNENCODED.exec(url.pathname);
	if (m) return url.pathname.replace(UNENCODED, '$1%2F$2');
};
