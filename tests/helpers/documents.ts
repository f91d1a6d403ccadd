// Helpers for document and blank-control tests: the seeded demo report's items, held by Fennick.
import type { Client } from './http';

/** The sample aliquot and the blank item of the seeded demo blank-control report (the oldest one Fennick sees). */
export async function demoReportItems(fennick: Client): Promise<{ sample: string; blank: string }> {
	const list = await fennick.get('/api/blank-control-reports');
	const demo = (await fennick.get(`/api/blank-control-reports/${list.body.reports.at(-1).id}`)).body.report;
	return {
		sample: demo.items.find((i: { role: string }) => i.role === 'sample').code,
		blank: demo.items.find((i: { role: string }) => i.role === 'blank').code
	};
}
