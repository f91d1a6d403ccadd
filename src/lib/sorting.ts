/**
 * Column sorting of the keyset tables (items, offer): one click sorts by a column, a second click
 * on the same column turns the direction; the header says the order to assistive technology.
 */
export interface SortState {
	sort: string;
	dir: string;
}

/** Sorts by `key`; its first direction is ascending for the keys listed in `ascendingFirst`, else descending. */
export function sortBy(state: SortState, key: string, ascendingFirst: readonly string[] = ['code']): void {
	if (state.sort === key) state.dir = state.dir === 'asc' ? 'desc' : 'asc';
	else {
		state.sort = key;
		state.dir = ascendingFirst.includes(key) ? 'asc' : 'desc';
	}
}

/** The header's aria-sort value. */
export const ariaSort = (state: SortState, key: string) => (state.sort === key ? (state.dir === 'asc' ? 'ascending' : 'descending') : 'none');

/** The header's arrow. */
export const sortArrow = (state: SortState, key: string) => (state.sort === key ? (state.dir === 'asc' ? '▲' : '▼') : '');
