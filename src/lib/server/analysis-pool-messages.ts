// Messages between the analysis pool and its worker threads.
export interface PoolTask<Req> {
	id: number;
	request: Req;
}

export type PoolReply =
	| { id: number; ok: true; output: unknown }
	/** A bad upload: answered as a 400 naming `path`. */
	| { id: number; ok: false; refusal: { path: string; message: string } }
	/** A bug or crash inside the worker: answered as a 500 and logged. */
	| { id: number; ok: false; error: string };
