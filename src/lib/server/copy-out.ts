import type pg from 'pg';

/**
 * Reading `COPY … TO STDOUT (FORMAT binary)` straight off a pg connection's socket, tuple by tuple,
 * with each field's bytes left where they arrived (no per-row objects, no copies except for the one
 * message a socket chunk cuts in two, whose parts are joined once).
 *
 * Two formats are read, both from the PostgreSQL documentation:
 * - the frontend/backend protocol's messages (chapter "Frontend/Backend Protocol", "Message
 *   Formats"): a type byte and a 32-bit length that counts itself; in copy-out mode the backend sends
 *   CopyOutResponse 'H', CopyData 'd' "always one per row", CopyDone 'c', then CommandComplete 'C'
 *   (or ErrorResponse 'E') and ReadyForQuery 'Z' ("Protocol Flow", "COPY Operations");
 * - COPY's binary format (COPY, "Binary Format"): an 11-byte signature, a 32-bit flags field and a
 *   header extension; then per tuple a 16-bit field count and, per field, a 32-bit length, −1 for
 *   NULL, followed by that many bytes; a field count of −1 ends the data.
 *
 * A tuple lies wholly inside one CopyData message; one that does not is refused as malformed.
 */

const COPY_SIGNATURE = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1');
const D = 0x64; // CopyData
const H = 0x48; // CopyOutResponse
const C_DONE = 0x63; // CopyDone
const PASSING = new Set([0x4e, 0x53, 0x41]); // NoticeResponse, ParameterStatus, NotificationResponse: may come at any time

/**
 * Parses the backend's messages of one COPY TO STDOUT in binary format from socket chunks.
 * For each tuple it sets `start`/`end` of every field (start −1 for NULL) and calls `onTuple` with
 * the buffer they point into, valid only during the call; `onTuple` returns false to stop. At the
 * first message that is not part of the copy (CommandComplete, ErrorResponse, …) it stops and calls
 * `onRest` with the bytes from that message on, for the driver to read.
 */
export class CopyOutParser {
	readonly start: Int32Array;
	readonly end: Int32Array;
	/** the end-of-data marker has been read */
	ended = false;
	/** CopyDone has been read */
	copyDone = false;
	/** onTuple asked to stop */
	stopped = false;
	/** handed the rest to onRest: the copy is over */
	finished = false;
	/** the parts of a message that a chunk began and the next ones go on with */
	private pending: Buffer[] = [];
	private pendingLength = 0;
	private headerRead = false;
	private other = false;

	constructor(
		readonly fields: number,
		private readonly onTuple: (buf: Buffer, p: CopyOutParser) => boolean,
		private readonly onRest: (rest: Buffer) => void = () => {}
	) {
		this.start = new Int32Array(fields);
		this.end = new Int32Array(fields);
	}

	/** Reads one socket chunk; false once the copy is over or onTuple asked to stop. */
	push(chunk: Buffer): boolean {
		if (this.finished || this.stopped) return false;
		let off = 0;
		while (this.pendingLength > 0) {
			// complete the message an earlier chunk began, with just the bytes it still needs: its parts
			// are kept as they came and joined once, so a long message is not copied again per chunk
			if (this.pendingLength < 5) {
				const take = Math.min(chunk.length - off, 5 - this.pendingLength);
				this.pending.push(chunk.subarray(off, off + take));
				this.pendingLength += take;
				off += take;
				if (this.pendingLength < 5) return true;
				this.pending = [Buffer.concat(this.pending)];
			}
			const need = 1 + this.pending[0].readUInt32BE(1);
			const take = Math.min(chunk.length - off, need - this.pendingLength);
			this.pending.push(chunk.subarray(off, off + take));
			this.pendingLength += take;
			off += take;
			if (this.pendingLength < need) return true;
			const joined = this.pending.length === 1 ? this.pending[0] : Buffer.concat(this.pending, this.pendingLength);
			this.pending = [];
			this.pendingLength = 0;
			const r = this.messages(joined, 0);
			if (r < 0) return false;
			if (this.other) {
				this.finish(Buffer.concat([joined.subarray(r), chunk.subarray(off)]));
				return false;
			}
		}
		const r = this.messages(chunk, off);
		if (r < 0) return false;
		if (this.other) {
			this.finish(chunk.subarray(r));
			return false;
		}
		if (r < chunk.length) {
			this.pending = [chunk.subarray(r)];
			this.pendingLength = chunk.length - r;
		}
		return true;
	}

	private finish(rest: Buffer): void {
		this.finished = true;
		this.onRest(rest);
	}

	/**
	 * Handles every complete copy message from `off`; returns where it stopped (at an incomplete
	 * message, or at the first message that is not part of the copy, setting `other`), or −1 when
	 * onTuple asked to stop.
	 */
	private messages(buf: Buffer, off: number): number {
		const length = buf.length;
		while (off + 5 <= length) {
			const type = buf[off];
			if (type !== D && type !== H && type !== C_DONE && !PASSING.has(type)) {
				this.other = true;
				return off;
			}
			const end = off + 1 + buf.readUInt32BE(off + 1);
			if (end > length) break;
			if (type === D && !this.data(buf, off + 5, end)) {
				this.stopped = true;
				return -1;
			}
			if (type === C_DONE) this.copyDone = true;
			off = end;
		}
		return off;
	}

	/** The tuples of one CopyData message [from, to). */
	private data(buf: Buffer, from: number, to: number): boolean {
		let p = from;
		if (!this.headerRead) {
			if (to - p < 19 || buf.compare(COPY_SIGNATURE, 0, 11, p, p + 11) !== 0) throw new Error('not PostgreSQL binary COPY data');
			p += 19 + buf.readUInt32BE(p + 15);
			this.headerRead = true;
		}
		const { start, end } = this;
		const n = this.fields;
		while (p < to) {
			if (this.ended) throw new Error('COPY data after its end marker');
			const count = buf.readInt16BE(p);
			p += 2;
			if (count === -1) {
				this.ended = true;
				continue;
			}
			if (count !== n) throw new Error(`COPY tuple has ${count} fields, expected ${n}`);
			for (let i = 0; i < n; i++) {
				const len = buf.readInt32BE(p);
				p += 4;
				if (len < 0) {
					start[i] = -1;
					end[i] = -1;
				} else {
					start[i] = p;
					end[i] = p += len;
				}
			}
			if (p > to) throw new Error('a COPY tuple runs past the end of its message');
			if (!this.onTuple(buf, this)) return false;
		}
		return true;
	}
}

interface PgConnection {
	stream: NodeJS.ReadableStream & { destroy(): void };
	query(text: string): void;
}

/**
 * Runs one `COPY … TO STDOUT (FORMAT binary)` on a pg.Client as its active query and feeds the
 * socket's bytes to a CopyOutParser while the copy lasts; the driver reads everything after it
 * (CommandComplete, an error, ReadyForQuery) as usual. `done` settles when the driver is ready
 * again, with the copy's error, or as soon as onTuple asks to stop (`parser.stopped`): that leaves
 * the connection mid-protocol, and the caller must then close it (`abandon`).
 */
export class CopyOutQuery {
	readonly done: Promise<void>;
	parser!: CopyOutParser;
	private resolve!: () => void;
	private reject!: (e: Error) => void;
	private connection: PgConnection | null = null;

	constructor(
		readonly text: string,
		private readonly fields: number,
		private readonly onTuple: (buf: Buffer, p: CopyOutParser) => boolean,
		/** sees every chunk as it came off the socket (tests record them) */
		private readonly tap?: (chunk: Buffer) => void
	) {
		this.done = new Promise((res, rej) => {
			this.resolve = res;
			this.reject = rej;
		});
	}

	/** pg's Submittable interface: called by Client.query when this becomes the active query. */
	submit(connection: PgConnection): void {
		this.connection = connection;
		const stream = connection.stream;
		const [pgData] = stream.listeners('data') as ((b: Buffer) => void)[];
		if (!pgData) throw new Error('the connection has no data listener to take over');
		const onData = (chunk: Buffer) => {
			this.tap?.(chunk);
			try {
				this.parser.push(chunk);
			} catch (e) {
				stream.removeListener('data', onData);
				this.reject(e as Error);
				return;
			}
			if (this.parser.stopped) {
				stream.removeListener('data', onData);
				this.resolve();
			}
		};
		this.parser = new CopyOutParser(this.fields, this.onTuple, (rest) => {
			stream.removeListener('data', onData);
			stream.on('data', pgData);
			if (rest.length) pgData(rest);
		});
		stream.removeListener('data', pgData);
		stream.on('data', onData);
		connection.query(this.text);
	}

	/** Closes the connection outright (after an early stop or a malformed stream). */
	abandon(): void {
		this.connection?.stream.destroy();
	}

	handleError(err: Error): void {
		this.reject(err);
	}
	handleCommandComplete(): void {}
	handleReadyForQuery(): void {
		this.resolve();
	}
	handleEmptyQuery(): void {}
	handleRowDescription(): void {}
	handleDataRow(): void {}
	handlePortalSuspended(): void {}
	handleCopyInResponse(): void {}
	handleCopyData(): void {}
}

/** Submits a CopyOutQuery on a connected client (pg's types know only its own query objects). */
export function submitCopyOut(client: pg.Client, q: CopyOutQuery): void {
	(client as unknown as { query(q: unknown): unknown }).query(q);
}
