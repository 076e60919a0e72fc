// Browser side of attaching files to a job: one XMLHttpRequest per file, so each has its own
// progress (upload.onprogress) and its own cancel (abort). fetch() reports no upload progress.

export interface UploadAnswer {
	status: number;
	/** The parsed JSON answer (`{ files }` on 201, `{ message, issues? }` on a refusal), or null. */
	body: unknown;
}

export interface UploadHandle {
	done: Promise<UploadAnswer>;
	abort(): void;
}

/** POST `file` as the multipart part `file` to `url`; `onProgress` gets 0…1 as bytes go out. */
export function uploadFile(url: string, file: File, onProgress: (fraction: number) => void): UploadHandle {
	const xhr = new XMLHttpRequest();
	const done = new Promise<UploadAnswer>((resolve, reject) => {
		xhr.upload.onprogress = (e) => {
			if (e.lengthComputable && e.total > 0) onProgress(e.loaded / e.total);
		};
		xhr.onload = () => {
			let body: unknown = null;
			try {
				body = JSON.parse(xhr.responseText);
			} catch {
				body = null;
			}
			resolve({ status: xhr.status, body });
		};
		xhr.onerror = () => reject(new Error('The connection failed before the server answered'));
		xhr.onabort = () => reject(new DOMException('Cancelled', 'AbortError'));
	});
	const form = new FormData();
	form.append('file', file, file.name);
	xhr.open('POST', url);
	xhr.setRequestHeader('accept', 'application/json');
	xhr.send(form);
	return { done, abort: () => xhr.abort() };
}

/** The message of a refusal answer, or a plain one built from its status. */
export function refusalText(answer: UploadAnswer): string {
	const b = answer.body as { message?: unknown } | null;
	if (b && typeof b.message === 'string') return b.message;
	if (answer.status === 413) return 'The file is larger than the server accepts';
	return `The server refused the upload (${answer.status})`;
}
