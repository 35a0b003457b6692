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

/** Bytes of the next chunk first joined to a carried-over tuple start (doubled until the tuple ends). */
const FIRST_JOIN = 4096;

export class CopyBinaryParser {
  /**
   * The unparsed end of the last chunk (a tuple, or the header, that the next chunk ends), in
   * a buffer of our own that is reused: a chunk is not copied whole to join it to this.
   */
  private carry = Buffer.alloc(0);
  private carryLength = 0;
  private headerDone = false;
  private finished = false;
  tuples = 0;

  constructor(
    private readonly columns: number,
    private readonly sink: TupleSink,
  ) {}

  push(chunk: Buffer): void {
    let from = 0;
    if (this.carryLength > 0) {
      // Join the carried bytes with as much of the chunk as it takes to finish their tuple.
      let take = Math.min(chunk.length, Math.max(FIRST_JOIN, 2 * this.carryLength));
      for (;;) {
        const kept = this.carryLength;
        this.reserve(kept + take);
        chunk.copy(this.carry, kept, 0, take);
        const used = this.parse(this.carry.subarray(0, kept + take), 0);
        if (used >= kept) {
          from = used - kept;
          this.carryLength = 0;
          break;
        }
        // Still unfinished: keep it (less what was parsed), and join more of the chunk, or all of it.
        const end = take === chunk.length ? kept + take : kept;
        this.carry.copyWithin(0, used, end);
        this.carryLength = end - used;
        if (take === chunk.length) return;
        take = Math.min(chunk.length, 2 * take);
      }
    }
    const used = this.parse(chunk, from);
    if (used < chunk.length) {
      this.reserve(chunk.length - used);
      this.carryLength = chunk.copy(this.carry, 0, used);
    }
  }

  /** Grows the carry buffer to hold n bytes, keeping its contents. */
  private reserve(n: number): void {
    if (this.carry.length >= n) return;
    const grown = Buffer.allocUnsafe(Math.max(n, 2 * this.carry.length));
    this.carry.copy(grown, 0, 0, this.carryLength);
    this.carry = grown;
  }

  /** Parses the complete tuples of buf from `pos` on; returns where the first incomplete one starts (or buf.length). */
  private parse(buf: Buffer, pos: number): number {
    const n = buf.length;
    if (!this.headerDone) {
      if (n - pos < HEADER_LENGTH) return pos;
      if (!buf.subarray(pos, pos + 11).equals(SIGNATURE)) throw new DataError('COPY stream does not start with the binary COPY signature');
      const flags = buf.readUInt32BE(pos + 11);
      if ((flags & FLAGS_READER_MUST_ABORT) !== 0) throw new DataError(`COPY header has flags 0x${flags.toString(16)}: OIDs or a format this reader does not know`);
      const extension = buf.readInt32BE(pos + 15);
      if (extension < 0) throw new DataError(`COPY header has a negative extension length (${extension})`);
      if (n - pos < HEADER_LENGTH + extension) return pos;
      pos += HEADER_LENGTH + extension;
      this.headerDone = true;
    }
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
        // One DataView per buffer: its getters are cheaper than Buffer's checked readers.
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
    return pos;
  }

  end(): void {
    if (!this.headerDone) throw new DataError('COPY stream ended before its header');
    if (this.carryLength > 0) throw new DataError(`COPY stream ended inside a tuple (${this.carryLength} bytes left)`);
    if (!this.finished) throw new DataError('COPY stream ended without its trailer');
  }
}
