/**
 * Byte builders for hand-made files (RIFF/WAVE and the like): Latin-1 text, little-endian integers, joins.
 * Little-endian as RIFF stores them (Microsoft/IBM "Multimedia Programming Interface and Data Specifications
 * 1.0", 1991).
 */

/** The bytes of a Latin-1 (one byte a character) string, e.g. a chunk id. */
export const latin1 = (s: string): Uint8Array => Uint8Array.from(s, (ch) => ch.charCodeAt(0));

/** An unsigned 32-bit integer, little-endian. */
export function u32le(v: number): Uint8Array {
  const b = new Uint8Array(4);
  new DataView(b.buffer).setUint32(0, v, true);
  return b;
}

/** An unsigned 64-bit integer (exact up to 2^53), little-endian. */
export function u64le(v: number): Uint8Array {
  return concatBytes(u32le(v % 2 ** 32), u32le(Math.floor(v / 2 ** 32)));
}

/** The parts one after the other, in a new array. */
export function concatBytes(...parts: readonly Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}
