import { ATMOSPHERE_LABELS, type Atmosphere } from '../../domain/exposure';

// The rows handling sessions are read from, the one SELECT that reads them with their items,
// blanks and contacts, and their view in the API.

export interface CollectionRow {
	id: string;
	prefix: string;
	allowed_atmospheres: string[];
	allowed_contact_materials: string[];
	max_air_exposure_min: number | null;
}

export interface SessionRow {
	id: string;
	prefix: string;
	atmosphere: Atmosphere;
	started_at: Date;
	ended_at: Date;
	temperature_c: string | null;
	humidity_pct: string | null;
	operator_email: string;
	operator_name: string;
	purpose: string;
	notes: string;
	recorded_at: Date;
	items: { id: string; code: string; holder: string | null }[];
	blanks: { id: string; code: string; analysed: boolean }[];
	contacts: { name: string; kind: string; material: string }[];
}

export const SESSION_SELECT = `
	SELECT s.id, c.prefix, s.atmosphere, s.started_at, s.ended_at, s.temperature_c, s.humidity_pct, u.email AS operator_email, u.name AS operator_name,
	       s.purpose, s.notes, s.recorded_at,
	       (SELECT coalesce(jsonb_agg(jsonb_build_object('id', i.id, 'code', i.code, 'holder', i.holder_lab_id) ORDER BY i.serial), '[]')
	          FROM handling_session_items hi JOIN items i ON i.id = hi.item_id WHERE hi.session_id = s.id) AS items,
	       (SELECT coalesce(jsonb_agg(jsonb_build_object('id', b.id, 'code', b.code,
	               'analysed', EXISTS (SELECT 1 FROM blank_analyses a WHERE a.blank_item_id = b.id)) ORDER BY b.serial), '[]')
	          FROM handling_session_blanks hb JOIN items b ON b.id = hb.blank_item_id WHERE hb.session_id = s.id) AS blanks,
	       (SELECT coalesce(jsonb_agg(jsonb_build_object('name', k.name, 'kind', k.kind, 'material', k.material) ORDER BY k.name), '[]')
	          FROM handling_session_contacts hc JOIN contact_catalogue k ON k.id = hc.contact_id WHERE hc.session_id = s.id) AS contacts
	FROM handling_sessions s JOIN collections c ON c.id = s.collection_id JOIN users u ON u.id = s.operator_id`;

export function sessionView(r: SessionRow) {
	return {
		id: r.id,
		collection: r.prefix,
		atmosphere: r.atmosphere,
		atmosphereLabel: ATMOSPHERE_LABELS[r.atmosphere],
		start: new Date(r.started_at).toISOString(),
		end: new Date(r.ended_at).toISOString(),
		minutes: (new Date(r.ended_at).getTime() - new Date(r.started_at).getTime()) / 60_000,
		temperatureC: r.temperature_c === null ? null : Number(r.temperature_c),
		humidityPct: r.humidity_pct === null ? null : Number(r.humidity_pct),
		operator: { email: r.operator_email, name: r.operator_name },
		purpose: r.purpose,
		notes: r.notes,
		items: r.items.map((i) => i.code),
		blanks: r.blanks.map((b) => ({ code: b.code, analysed: b.analysed })),
		contacts: r.contacts,
		recordedAt: new Date(r.recorded_at).toISOString()
	};
}
export type SessionView = ReturnType<typeof sessionView>;
