/**
 * A streaming parser for PostgreSQL's binary COPY format (PostgreSQL 15 docs, "COPY",
 * section "Binary Format"): a 19-byte header (signature, flags, extension length),
 * then per tuple an int16 field count and per field an int32 length (-1 for NULL)
 * followed by the value in the type's binary send format, and an int16 -1 trailer.
 *
 * Written by hand on purpose: the parser writes values straight into per-column typed
 * arrays, so a day of a million rows never becomes a million JavaScript objects (the
 * packages that parse this format hand out one object per row). Binary COPY is the
 * fastest way to move rows out of PostgreSQL measured on this machine (DESIGN.md).
 */
import { DataError } from '../errors.ts';

/** PostgreSQL 15 docs, COPY, "Binary Format", "File Header": the 11-byte signature `PGCOPY\n\377\r\n\0`. */
const SIGNATURE = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1');
/** Signature, then the 32-bit flags field and the 32-bit length of the header extension area (same section). */
const HEADER_LENGTH = 19;
/**
 * Flags field (same section): bit 16 says OIDs are included, which adds a field this reader
 * does not expect; bits 17-31 are reserved for format changes that are not backwards
 * compatible, and "a reader should abort if it finds an unexpected bit set in this range".
 * Bits 0-15 are reserved for backwards-compatible issues and may be ignored.
 */
const FLAGS_READER_MUST_ABORT = 0xffff0000;

/** Receives each field of each tuple, in order; `buf` is valid only during the call. */
export interface TupleSink {
  /** Called with the byte range of a non-null field, or start = -1 for NULL. */
  field(column: number, buf: Buffer, start: number, length: number): void;
  endTuple(): void;
  /**
   * Optional fast path: decode a whole tuple whose fields start at `start` (each an int32
   * length, -1 for NULL, then the bytes), instead of one call per field. The parser has
   * checked that the tuple is complete. A day of 1M rows x 50 features is 50M fields.
   */
  tuple?(buf: Buffer, view: DataView, start: number, fieldCount: number): void;
}

export class CopyBinaryParser {
  private pending: Buffer | null = null;
  private headerDone = false;
  private finished = false;
  tuples = 0;

  constructor(
    private readonly columns: number,
    private readonly sink: TupleSink,
  ) {}

  push(chunk: Buffer): void {
    const buf = this.pending === null ? chunk : Buffer.concat([this.pending, chunk]);
    let pos = 0;
    if (!this.headerDone) {
      if (buf.length < HEADER_LENGTH) {
        this.pending = buf;
        return;
      }
      if (!buf.subarray(0, 11).equals(SIGNATURE)) throw new DataError('COPY stream does not start with the binary COPY signature');
      const flags = buf.readUInt32BE(11);
      if ((flags & FLAGS_READER_MUST_ABORT) !== 0) throw new DataError(`COPY header has flags 0x${flags.toString(16)}: OIDs or a format this reader does not know`);
      const extension = buf.readInt32BE(15);
      if (extension < 0) throw new DataError(`COPY header has a negative extension length (${extension})`);
      if (buf.length < HEADER_LENGTH + extension) {
        this.pending = buf;
        return;
      }
      pos = HEADER_LENGTH + extension;
      this.headerDone = true;
    }
    const n = buf.length;
    let view: DataView | undefined;
    if (this.finished && pos < n) throw new DataError('COPY stream has data after its trailer');
    while (pos + 2 <= n) {
      const fieldCount = buf.readInt16BE(pos);
      if (fieldCount === -1) {
        // File Trailer: a 16-bit word holding -1. Nothing may follow it.
        this.finished = true;
        pos += 2;
        if (pos < n) throw new DataError('COPY stream has data after its trailer');
        break;
      }
      if (fieldCount !== this.columns) throw new DataError(`COPY tuple has ${fieldCount} fields, expected ${this.columns}`);
      // Check that the whole tuple is here before handing any field out.
      let end = pos + 2;
      let complete = true;
      for (let c = 0; c < fieldCount; c++) {
        if (end + 4 > n) {
          complete = false;
          break;
        }
        const len = buf.readInt32BE(end);
        if (len < -1) throw new DataError(`COPY field ${c} of tuple ${this.tuples + 1} has length ${len}`);
        end += 4 + (len > 0 ? len : 0);
        if (end > n) {
          complete = false;
          break;
        }
      }
      if (!complete) break;
      if (this.sink.tuple !== undefined) {
        // One DataView per chunk: its getters are cheaper than Buffer's checked readers.
        view ??= new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
        this.sink.tuple(buf, view, pos + 2, fieldCount);
      }
      else {
        let p = pos + 2;
        for (let c = 0; c < fieldCount; c++) {
          const len = buf.readInt32BE(p);
          p += 4;
          if (len < 0) this.sink.field(c, buf, -1, 0);
          else {
            this.sink.field(c, buf, p, len);
            p += len;
          }
        }
      }
      this.sink.endTuple();
      this.tuples++;
      pos = end;
    }
    this.pending = pos < n ? buf.subarray(pos) : null;
    if (this.pending !== null && this.pending.buffer.byteLength > 4 * this.pending.length) {
      // Do not keep a large chunk alive for a small remainder.
      this.pending = Buffer.from(this.pending);
    }
  }

  end(): void {
    if (!this.headerDone) throw new DataError('COPY stream ended before its header');
    if (this.pending !== null && this.pending.length > 0) throw new DataError(`COPY stream ended inside a tuple (${this.pending.length} bytes left)`);
    if (!this.finished) throw new DataError('COPY stream ended without its trailer');
  }
}
