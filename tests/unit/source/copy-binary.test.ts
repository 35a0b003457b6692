/**
 * The binary COPY parser on streams built by hand and on bytes a real server produced, fed
 * in chunks split at every byte offset: every field must arrive, in order, whatever the
 * chunking; broken streams must fail with a DataError that says what is wrong.
 *
 * The format, from the PostgreSQL 15 documentation, COPY, section "Binary Format":
 * - File Header: the 11-byte signature `PGCOPY\n\377\r\n\0`, a 32-bit flags field (bit 16:
 *   OIDs included; bits 17-31: reserved, a reader must abort if one is set), a 32-bit length
 *   of the header extension area, then that many bytes of extension (skipped by readers).
 * - Tuples: a 16-bit field count, then per field a 32-bit length in bytes (-1 for NULL, no
 *   bytes follow) and the value in the type's binary send format. All integers in network
 *   byte order (big-endian).
 * - File Trailer: a 16-bit word holding -1.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { DataError } from '../../../src/errors.ts';
// The parser is internal to src/source (its index does not export it); it is tested directly.
import { CopyBinaryParser, type TupleSink } from '../../../src/source/index.ts';

// PostgreSQL 15 docs, COPY, "Binary Format", "File Header".
const SIGNATURE = Buffer.from([0x50, 0x47, 0x43, 0x4f, 0x50, 0x59, 0x0a, 0xff, 0x0d, 0x0a, 0x00]); // 'PGCOPY\n\377\r\n\0'
const NULL_LENGTH = -1; // "File Tuples": a field length of -1 is NULL
const TRAILER = -1; // "File Trailer": a 16-bit -1

function int16(v: number): Buffer {
  const b = Buffer.alloc(2);
  b.writeInt16BE(v);
  return b;
}
function int32(v: number): Buffer {
  const b = Buffer.alloc(4);
  b.writeInt32BE(v);
  return b;
}
function uint32(v: number): Buffer {
  const b = Buffer.alloc(4);
  b.writeUInt32BE(v);
  return b;
}
/** int4send: 4 bytes, big-endian. */
const int4 = (v: number): Buffer => int32(v);
/** float8send: IEEE 754 binary64, big-endian. */
function float8(v: number): Buffer {
  const b = Buffer.alloc(8);
  b.writeDoubleBE(v);
  return b;
}
/** textsend: the UTF-8 bytes, no terminator. */
const text = (s: string): Buffer => Buffer.from(s, 'utf8');

function header(options: { flags?: number; extension?: Buffer } = {}): Buffer {
  const ext = options.extension ?? Buffer.alloc(0);
  return Buffer.concat([SIGNATURE, uint32(options.flags ?? 0), int32(ext.length), ext]);
}
function tuple(fields: (Buffer | null)[]): Buffer {
  return Buffer.concat([int16(fields.length), ...fields.map((f) => (f === null ? int32(NULL_LENGTH) : Buffer.concat([int32(f.length), f])))]);
}
const trailer = (): Buffer => int16(TRAILER);

/** Records what the parser hands out: per tuple, each field's bytes (copied) or null. */
class Recorder implements TupleSink {
  readonly tuples: (Buffer | null)[][] = [];
  private current: (Buffer | null)[] = [];
  private expectColumn = 0;
  field(column: number, buf: Buffer, start: number, length: number): void {
    // Columns arrive in order, each once per tuple.
    if (column !== this.expectColumn) throw new Error(`column ${column} arrived where ${this.expectColumn} was expected`);
    this.expectColumn++;
    this.current.push(start < 0 ? null : Buffer.from(buf.subarray(start, start + length)));
  }
  endTuple(): void {
    this.tuples.push(this.current);
    this.current = [];
    this.expectColumn = 0;
  }
}

/** A compact text form of tuples, so that thousands of splits compare quickly: NULL is `-`. */
function show(tuples: (Buffer | null)[][]): string {
  return tuples.map((t) => t.map((f) => (f === null ? '-' : f.toString('hex'))).join(',')).join('|');
}

/** Feeds `stream` cut at the given offsets (ascending) and ends it. */
function parse(stream: Buffer, columns: number, cuts: number[] = []): Recorder {
  const sink = new Recorder();
  const parser = new CopyBinaryParser(columns, sink);
  let from = 0;
  for (const at of [...cuts, stream.length]) {
    parser.push(stream.subarray(from, at));
    from = at;
  }
  parser.end();
  if (parser.tuples !== sink.tuples.length) expect(parser.tuples).toBe(sink.tuples.length);
  return sink;
}

/** Three columns int4, float8, text, with NULLs, an empty string, non-ASCII text and special floats. */
const ROWS: (Buffer | null)[][] = [
  [int4(1), float8(2.5), text('harpsichord')],
  [int4(-7), null, text('')],
  [null, float8(-Infinity), null],
  [int4(2147483647), float8(Number.NaN), text('Ständchen für Klavier — 4 Hände')],
  [int4(-2147483648), float8(-0), text('x'.repeat(300))],
];
const STREAM = Buffer.concat([header(), ...ROWS.map(tuple), trailer()]);

describe('a hand-built stream of int4, float8 and text fields', () => {
  it('arrives whole when pushed in one chunk', () => {
    const got = parse(STREAM, 3).tuples;
    expect(got).toEqual(ROWS);
    expect(got[0]![0]!.readInt32BE(0)).toBe(1);
    expect(got[0]![1]!.readDoubleBE(0)).toBe(2.5);
    expect(got[1]![2]).toEqual(Buffer.alloc(0)); // empty text is not NULL
    expect(got[3]![2]!.toString('utf8')).toBe('Ständchen für Klavier — 4 Hände');
    expect(Object.is(got[4]![1]!.readDoubleBE(0), -0)).toBe(true);
  });

  it('arrives whole when split into two chunks at every byte offset', () => {
    const want = show(ROWS);
    for (let cut = 0; cut <= STREAM.length; cut++) {
      const got = show(parse(STREAM, 3, [cut]).tuples);
      if (got !== want) expect(got, `cut at ${cut}`).toBe(want);
    }
  });

  it('arrives whole when pushed one byte at a time', () => {
    expect(parse(STREAM, 3, Array.from({ length: STREAM.length - 1 }, (_, i) => i + 1)).tuples).toEqual(ROWS);
  });

  it('arrives whole when split into three chunks at every pair of offsets (short stream)', () => {
    const short = Buffer.concat([header(), tuple([int4(5), null, text('oboe')]), tuple([null, float8(1e-300), text('ä')]), trailer()]);
    const want = [
      [int4(5), null, text('oboe')],
      [null, float8(1e-300), text('ä')],
    ];
    const wanted = show(want);
    for (let i = 0; i <= short.length; i++) {
      for (let j = i; j <= short.length; j++) {
        const got = show(parse(short, 3, [i, j]).tuples);
        if (got !== wanted) expect(got, `cuts ${i}, ${j}`).toBe(wanted);
      }
    }
  });

  it('skips a header extension area, also when it is split', () => {
    const withExt = Buffer.concat([header({ extension: Buffer.from('future-extension-bytes') }), tuple([int4(9)]), trailer()]);
    for (let cut = 0; cut <= withExt.length; cut++) expect(parse(withExt, 1, [cut]).tuples, `cut at ${cut}`).toEqual([[int4(9)]]);
  });

  it('ignores the backwards-compatible flag bits 0-15', () => {
    expect(parse(Buffer.concat([header({ flags: 0x0000ffff }), tuple([int4(1)]), trailer()]), 1).tuples).toEqual([[int4(1)]]);
  });

  it('arrives whole when a tuple spans many chunks, each shorter than the tuple', () => {
    // A field of 20,000 bytes in chunks of 997 bytes: the tuple begun in one chunk is ended
    // twenty chunks later, so the bytes carried over grow across pushes.
    const long: (Buffer | null)[][] = [[int4(3), text('ä'.repeat(10_000))], [null, text('bassoon')], [int4(4), text('z'.repeat(9_000))]];
    const stream = Buffer.concat([header(), ...long.map(tuple), trailer()]);
    for (const step of [997, 4096, 5000]) {
      const cuts = Array.from({ length: Math.floor((stream.length - 1) / step) }, (_, i) => (i + 1) * step);
      expect(show(parse(stream, 2, cuts).tuples), `chunks of ${step}`).toBe(show(long));
    }
  });

  it('handles a stream without tuples', () => {
    expect(parse(Buffer.concat([header(), trailer()]), 4).tuples).toEqual([]);
  });
});

describe('random streams (fast-check, fixed seed)', () => {
  it('deliver every field of every tuple, in order, whatever the chunking', () => {
    const field = fc.oneof(
      fc.constant(null),
      fc.integer({ min: -2147483648, max: 2147483647 }).map(int4),
      fc.double().map(float8),
      fc.string({ unit: 'grapheme', maxLength: 20 }).map(text),
    );
    const streams = fc.integer({ min: 1, max: 5 }).chain((columns) =>
      fc.record({
        columns: fc.constant(columns),
        rows: fc.array(fc.array(field, { minLength: columns, maxLength: columns }), { maxLength: 8 }),
        cuts: fc.array(fc.nat(), { maxLength: 6 }),
      }),
    );
    fc.assert(
      fc.property(streams, ({ columns, rows, cuts }) => {
        const stream = Buffer.concat([header(), ...rows.map(tuple), trailer()]);
        const at = [...new Set(cuts.map((c) => c % (stream.length + 1)))].sort((a, b) => a - b);
        return show(parse(stream, columns, at).tuples) === show(rows);
      }),
      { seed: 20250315, numRuns: 300 },
    );
  });
});

describe('bytes from a real server', () => {
  // PostgreSQL 15.20 (Debian 15.20-0+deb12u1), captured once with
  //   psql -c "COPY (SELECT * FROM (VALUES (1::int4, 2.5::float8, 'héllo'::text), (-7, NULL, ''),
  //            (NULL, '-Infinity'::float8, NULL)) v(a,b,c)) TO STDOUT (FORMAT binary)" | xxd -p
  const SERVER = Buffer.from(
    '5047434f50590aff0d0a000000000000000000000300000004000000010000000840040000000000000000000668c3a96c6c6f000300000004fffffff9ffffffff000000000003ffffffff00000008fff0000000000000ffffffffffff',
    'hex',
  );

  it('parses to the values that were selected, at every split', () => {
    const want = [
      [int4(1), float8(2.5), text('héllo')],
      [int4(-7), null, text('')],
      [null, float8(-Infinity), null],
    ];
    // The hand-built encoding agrees byte for byte with the server's.
    expect(Buffer.concat([header(), ...want.map(tuple), trailer()])).toEqual(SERVER);
    for (let cut = 0; cut <= SERVER.length; cut++) expect(parse(SERVER, 3, [cut]).tuples).toEqual(want);
  });
});

describe('broken streams', () => {
  function failure(stream: Buffer, columns: number, cuts: number[] = []): DataError {
    try {
      parse(stream, columns, cuts);
    } catch (err) {
      expect(err).toBeInstanceOf(DataError);
      return err as DataError;
    }
    throw new Error('expected the stream to be rejected');
  }

  it('rejects a bad signature', () => {
    const bad = Buffer.from(STREAM);
    bad[10] = 0x01; // the signature's last byte must be \0
    expect(failure(bad, 3).message).toBe('COPY stream does not start with the binary COPY signature');
    expect(failure(Buffer.concat([Buffer.from('1\tharp\n'.repeat(4))]), 3).message).toMatch(/signature/); // text format
  });

  it('rejects a stream truncated anywhere, before the header, inside a tuple or before the trailer', () => {
    for (let len = 0; len < STREAM.length; len++) {
      const e = failure(STREAM.subarray(0, len), 3);
      if (len < 19) expect(e.message, `truncated to ${len}`).toBe('COPY stream ended before its header');
      else expect(e.message, `truncated to ${len}`).toMatch(/^COPY stream ended (inside a tuple \(\d+ bytes left\)|without its trailer)$/);
    }
    // Exactly at a tuple boundary: the trailer is what is missing.
    expect(failure(STREAM.subarray(0, STREAM.length - 2), 3).message).toBe('COPY stream ended without its trailer');
  });

  it('rejects a tuple with the wrong field count', () => {
    const stream = Buffer.concat([header(), tuple([int4(1), float8(1), text('a')]), tuple([int4(1), float8(1)]), trailer()]);
    expect(failure(stream, 3).message).toBe('COPY tuple has 2 fields, expected 3');
    expect(failure(Buffer.concat([header(), tuple([int4(1)]), trailer()]), 2).message).toBe('COPY tuple has 1 fields, expected 2');
  });

  it('rejects OIDs (flag bit 16) and unknown incompatible flags (bits 17-31)', () => {
    expect(failure(Buffer.concat([header({ flags: 1 << 16 }), trailer()]), 1).message).toBe('COPY header has flags 0x10000: OIDs or a format this reader does not know');
    expect(failure(Buffer.concat([header({ flags: 0x80000000 }), trailer()]), 1).message).toMatch(/^COPY header has flags 0x80000000/);
  });

  it('rejects a negative field length other than -1, and a negative extension length', () => {
    const stream = Buffer.concat([header(), int16(1), int32(-2), trailer()]);
    expect(failure(stream, 1).message).toBe('COPY field 0 of tuple 1 has length -2');
    const ext = Buffer.concat([SIGNATURE, uint32(0), int32(-4), trailer()]);
    expect(failure(ext, 1).message).toBe('COPY header has a negative extension length (-4)');
  });

  it('rejects data after the trailer, in the same chunk or a later one', () => {
    const extra = Buffer.concat([STREAM, tuple([int4(1), null, null])]);
    expect(failure(extra, 3).message).toBe('COPY stream has data after its trailer');
    expect(failure(extra, 3, [STREAM.length]).message).toBe('COPY stream has data after its trailer');
  });
});
