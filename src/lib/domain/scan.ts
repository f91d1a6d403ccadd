/**
 * Reading what a scanner or a person put into the scan field: an item code (typed, or sent by a
 * keyboard-wedge scanner) or the URL a Regolog label's QR code holds. Pure; runs in the browser.
 */
import { parseCode } from './codes';

export type ScanResult =
	| { ok: true; code: string }
	| { ok: false; kind: 'empty' | 'malformed' | 'check' | 'foreign' | 'not-item'; reason: string };

const URL_LIKE = /^[a-z][a-z0-9+.-]*:\/\//i;

/**
 * `origin` is Regolog's configured public origin (e.g. "https://regolog.brightwater.example").
 * A URL must come from that origin and point at /items/{code}; a code must carry the right
 * check character (ISO/IEC 7064:2003, MOD 37,36).
 */
export function readScan(text: string, origin: string): ScanResult {
	// Wedge scanners may add a carriage return, a tab or control characters around the data.
	const t = String(text ?? '').replace(/[\u0000-\u001f\u007f]/g, '').trim();
	if (t === '') return { ok: false, kind: 'empty', reason: 'Scan a label or type an item code.' };
	if (URL_LIKE.test(t)) return fromUrl(t, origin);
	const p = parseCode(t);
	if (p.ok) return { ok: true, code: p.code };
	// a code has one slash, before its check character; a path or query is something else
	if (/[\\?#]|\/.*\//.test(t)) {
		return { ok: false, kind: 'malformed', reason: `"${clip(t)}" is neither an item code nor a Regolog label link.` };
	}
	return { ok: false, kind: p.kind, reason: sentence(p.reason) };
}

function fromUrl(t: string, origin: string): ScanResult {
	let url: URL;
	let ours: URL;
	try {
		url = new URL(t);
		ours = new URL(origin);
	} catch {
		return { ok: false, kind: 'malformed', reason: `"${clip(t)}" is not a readable link.` };
	}
	if (url.origin !== ours.origin) {
		return {
			ok: false,
			kind: 'foreign',
			reason: `This code links to ${url.host || url.protocol}, not to this Regolog (${ours.host}); it is not one of our labels, so nothing was opened.`
		};
	}
	// /items/TRN-00042%2FG as Regolog prints it; /items/TRN-00042/G when the slash was left unencoded
	const m = /^\/items\/([^/]+(?:\/[0-9A-Za-z])?)\/?$/.exec(url.pathname);
	if (!m) return { ok: false, kind: 'not-item', reason: `The link points to ${url.pathname} on Regolog, not to an item.` };
	let raw: string;
	try {
		raw = decodeURIComponent(m[1]);
	} catch {
		return { ok: false, kind: 'malformed', reason: `The item part of the link, "${clip(m[1])}", cannot be read.` };
	}
	const p = parseCode(raw);
	if (p.ok) return { ok: true, code: p.code };
	return { ok: false, kind: p.kind, reason: sentence(p.reason) };
}

function clip(s: string): string {
	return s.length > 60 ? s.slice(0, 57) + '…' : s;
}

function sentence(s: string): string {
	const t = s.charAt(0).toUpperCase() + s.slice(1);
	return /[.!?]$/.test(t) ? t : t + '.';
}
