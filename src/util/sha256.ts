/**
 * SHA-256 (FIPS 180-4) of a string's UTF-8 bytes, as lowercase hex. Pure TypeScript so that the
 * core (problem and table hashes) runs in a browser without `node:crypto`; only hashes of table and
 * problem text go through it, never a hot path. Checked against `node:crypto` in test/api/sha256.test.ts.
 */
const K = new Uint32Array([
  0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4, 0xab1c5ed5, 0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3,
  0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174, 0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da,
  0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967, 0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13,
  0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85, 0xa2bfe8a1, 0xa81a664b, 0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070,
  0x19a4c116, 0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3, 0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208,
  0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2,
]);

/** Lowercase hex SHA-256 digest of `text` encoded as UTF-8. */
export function sha256Hex(text: string): string {
  return new Sha256().update(text).hex();
}

/**
 * Incremental SHA-256 over UTF-8 text given in pieces: `update` any number of times, then `hex`
 * once. The digest equals `sha256Hex` of the concatenated text, so a large table can be hashed
 * without building one string for it.
 */
export class Sha256 {
  private readonly h = new Uint32Array([0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a, 0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19]);
  private readonly w = new Uint32Array(64);
  /** a partial 64-byte block */
  private readonly buf = new Uint8Array(64);
  private readonly view = new DataView(this.buf.buffer);
  private fill = 0;
  private bytes = 0;
  private readonly encoder = new TextEncoder();
  private done = false;

  /** Add the UTF-8 bytes of `text` (a string) or `bytes`; returns this. */
  update(data: string | Uint8Array): this {
    if (this.done) throw new Error('Sha256: update after hex()');
    const bytes = typeof data === 'string' ? this.encoder.encode(data) : data;
    this.bytes += bytes.length;
    let i = 0;
    if (this.fill > 0) {
      const take = Math.min(64 - this.fill, bytes.length);
      this.buf.set(bytes.subarray(0, take), this.fill);
      this.fill += take;
      i = take;
      if (this.fill < 64) return this;
      this.block(this.view, 0);
      this.fill = 0;
    }
    if (bytes.length - i >= 64) {
      const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
      for (; i + 64 <= bytes.length; i += 64) this.block(dv, i);
    }
    this.buf.set(bytes.subarray(i), 0);
    this.fill = bytes.length - i;
    return this;
  }

  /** The digest as lowercase hex; the hasher is finished afterwards. */
  hex(): string {
    if (this.done) throw new Error('Sha256: hex() called twice');
    const bitLen = this.bytes * 8;
    const tail = new Uint8Array(this.fill + 9 <= 64 ? 64 : 128);
    tail.set(this.buf.subarray(0, this.fill));
    tail[this.fill] = 0x80;
    const dv = new DataView(tail.buffer);
    dv.setUint32(tail.length - 8, Math.floor(bitLen / 2 ** 32));
    dv.setUint32(tail.length - 4, bitLen >>> 0);
    for (let off = 0; off < tail.length; off += 64) this.block(dv, off);
    this.done = true;
    return Array.from(this.h, (x) => x.toString(16).padStart(8, '0')).join('');
  }

  private block(dv: DataView, off: number): void {
    const { h, w } = this;
    const rotr = (x: number, n: number) => (x >>> n) | (x << (32 - n));
    for (let t = 0; t < 16; t++) w[t] = dv.getUint32(off + 4 * t);
    for (let t = 16; t < 64; t++) {
      const s0 = rotr(w[t - 15], 7) ^ rotr(w[t - 15], 18) ^ (w[t - 15] >>> 3);
      const s1 = rotr(w[t - 2], 17) ^ rotr(w[t - 2], 19) ^ (w[t - 2] >>> 10);
      w[t] = w[t - 16] + s0 + w[t - 7] + s1;
    }
    let [a, b, c, d, e, f, g, k] = h;
    for (let t = 0; t < 64; t++) {
      const t1 = k + (rotr(e, 6) ^ rotr(e, 11) ^ rotr(e, 25)) + ((e & f) ^ (~e & g)) + K[t] + w[t];
      const t2 = (rotr(a, 2) ^ rotr(a, 13) ^ rotr(a, 22)) + ((a & b) ^ (a & c) ^ (b & c));
      k = g;
      g = f;
      f = e;
      e = (d + t1) >>> 0;
      d = c;
      c = b;
      b = a;
      a = (t1 + t2) >>> 0;
    }
    h[0] += a;
    h[1] += b;
    h[2] += c;
    h[3] += d;
    h[4] += e;
    h[5] += f;
    h[6] += g;
    h[7] += k;
  }
}
