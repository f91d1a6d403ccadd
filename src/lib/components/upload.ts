/** Browser upload of one file as the raw request body, reporting real progress (XMLHttpRequest upload events). */
export interface UploadOutcome {
	status: number;
	body: any;
}

export function uploadFile(url: string, file: Blob, contentType: string, onProgress: (sent: number, total: number) => void): Promise<UploadOutcome> {
	return new Promise((resolve, reject) => {
		const xhr = new XMLHttpRequest();
		xhr.open('POST', url);
		xhr.setRequestHeader('content-type', contentType || 'application/octet-stream');
		xhr.upload.onprogress = (e) => onProgress(e.loaded, e.lengthComputable ? e.total : file.size);
		xhr.onload = () => {
			let body: unknown = null;
			try {
				body = JSON.parse(xhr.responseText);
			} catch {
				body = { error: { code: 'unexpected', message: `The server answered ${xhr.status} without an explanation.` } };
			}
			resolve({ status: xhr.status, body });
		};
		xhr.onerror = () => reject(new Error('The connection to Regolog failed during the upload; nothing may have been saved. Try again.'));
		xhr.onabort = () => reject(new Error('The upload was cancelled.'));
		xhr.send(file);
	});
}

/** The content type to declare: the browser's, or one from the file ending where the browser gives none. */
export function typeOf(file: File): string {
	if (file.type && file.type !== 'application/vnd.ms-excel') return file.type;
	const ending = file.name.toLowerCase().split('.').pop();
	return ending === 'csv' ? 'text/csv' : 'application/octet-stream';
}

export function formatBytes(n: number): string {
	if (n < 1024) return `${n} B`;
	if (n < 1024 * 1024) return `${(n / 1024).toFixed(1)} kB`;
	return `${(n / 1024 / 1024).toFixed(1)} MB`;
}
