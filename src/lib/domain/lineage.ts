/** One entry of GET /api/items/{code}/lineage. */
export interface LineageEntry {
	code: string;
	parentCode: string | null;
	level: number;
	kind: string;
	state: string;
	massUg: number;
	initialMassUg: number;
	holder: string;
	children: number;
}
