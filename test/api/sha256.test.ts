import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { Sha256, sha256Hex } from '../../src/util/sha256.js';
import { rng } from '../helpers/solved.js';

describe('sha256Hex (pure, for the browser core)', () => {
  it('matches the FIPS 180-2 appendix B examples', () => {
    // FIPS 180-2, appendix B.1 and B.2 (published test vectors)
    expect(sha256Hex('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    expect(sha256Hex('abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq')).toBe('248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1');
    expect(sha256Hex('')).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
  });
  it('matches node:crypto on seeded strings of every length 0…300 (padding edges) and non-ASCII text', () => {
    // reference: node:crypto (OpenSSL's SHA-256)
    const rnd = rng(17);
    const alphabet = 'abcxyz019 ,.{}"θ∈±√ü\n';
    for (let len = 0; len <= 300; len++) {
      let s = '';
      for (let i = 0; i < len; i++) s += alphabet[Math.floor(rnd() * alphabet.length)];
      expect(sha256Hex(s), `length ${len}`).toBe(createHash('sha256').update(s).digest('hex'));
    }
  });
  it('Sha256 fed in seeded random pieces (strings and bytes) matches node:crypto on the whole text', () => {
    // reference: node:crypto (OpenSSL's SHA-256) on the concatenation
    const rnd = rng(29);
    const alphabet = 'abc019 ,.{}"θ∈±√ü\n';
    for (let trial = 0; trial < 60; trial++) {
      const pieces: string[] = [];
      const n = Math.floor(rnd() * 12);
      for (let p = 0; p < n; p++) {
        let s = '';
        const len = Math.floor(rnd() * (rnd() < 0.2 ? 300 : 70));
        for (let i = 0; i < len; i++) s += alphabet[Math.floor(rnd() * alphabet.length)];
        pieces.push(s);
      }
      const h = new Sha256();
      pieces.forEach((p, k) => h.update(k % 2 ? new TextEncoder().encode(p) : p));
      expect(h.hex(), `trial ${trial}`).toBe(createHash('sha256').update(pieces.join('')).digest('hex'));
    }
  });
});
