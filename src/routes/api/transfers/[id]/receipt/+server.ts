import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getTransfer } from '$lib/server/custody/transfers';
import { receiptPdf } from '$lib/server/custody/receipt';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	const data = await getTransfer(models(), locals.user!, params.id);
	const pdf = await receiptPdf(data);
	return new Response(new Uint8Array(pdf), {
		headers: { 'content-type': 'application/pdf', 'content-disposition': `attachment; filename="custody-receipt-${data.transfer.number}.pdf"` }
	});
});
