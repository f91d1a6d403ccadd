/** Which custody signatures a person may give on a transfer now (the server checks the same rules). */
export type Meaning = 'dispatched' | 'received_intact' | 'received_damaged' | 'refused' | 'returned_to_sender';

export function signableMeanings(
	x: { direction: 'outbound' | 'return'; state: string; refusedReturnedAt: unknown; labId: string | null },
	who: { role: string; labId: string | null }
): Meaning[] {
	const facility = who.role === 'curator' || who.role === 'admin';
	const lab = who.role === 'lab_member' && who.labId !== null && who.labId === x.labId;
	const sender = x.direction === 'outbound' ? facility : lab;
	const receiver = x.direction === 'outbound' ? lab : facility;
	if (x.state === 'prepared' && sender) return ['dispatched'];
	if (x.state === 'dispatched' && receiver) return ['received_intact', 'received_damaged', 'refused'];
	if (x.state === 'refused' && sender && !x.refusedReturnedAt) return ['returned_to_sender'];
	return [];
}
