/**
 * The transfer's manifest as RFC 8785 canonical JSON: what each signature is bound to
 * (21 CFR Part 11 §11.70, signature/record linking), and its SHA-256 (FIPS 180-4).
 *
 * Versions: a signature stays bound to the bytes it was given over, so the manifest of a transfer
 * is always built the way it was when the transfer was prepared.
 * - 1 (transfers prepared before migration 0090): item codes written PREFIX-NNNNN-C; no dry-ice mass.
 * - 2: item codes PREFIX-NNNNN/C; packaging carries `dryIceNetG`, the net mass of dry ice in whole
 *   grams (null without dry ice).
 */
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import { legacyCode } from '../../domain/codes';
import { requestNumber, transferNumber } from './common';
import type { TransferRow } from './transfer-rows';

export function manifestOf(x: TransferRow, items: { code: string; mass_ug: number }[]): string {
	const v1 = Number(x.manifest_version) === 1;
	const packaging: Record<string, unknown> = { container: x.container, seal: x.seal, atmosphere: x.atmosphere, temperature: x.temperature, coolant: x.coolant };
	if (!v1) packaging.dryIceNetG = x.dry_ice_net_g === null ? null : Number(x.dry_ice_net_g);
	const text = canonicalize({
		transfer: transferNumber(x.number),
		direction: x.direction,
		request: x.request_number === null ? null : requestNumber(x.request_number),
		from: x.from_lab_id === null ? { facility: true } : { labId: x.from_lab_id },
		to: x.to_lab_id === null ? { facility: true } : { labId: x.to_lab_id },
		items: items.map((i) => ({ code: v1 ? legacyCode(i.code) : i.code, massUg: Number(i.mass_ug) })),
		packaging,
		shipping: { carrier: x.carrier, trackingRef: x.tracking_ref, expectedArrival: x.expected_arrival }
	});
	if (!text) throw new Error('manifest cannot be canonicalized');
	return text;
}

export const sha256 = (s: string) => createHash('sha256').update(s).digest('hex');
