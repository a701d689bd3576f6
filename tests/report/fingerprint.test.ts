// The scenario fingerprint: canonical JSON (keys sorted at every depth) and a pure SHA-256
// that must equal node:crypto's to the bit, so the page and the server agree on it.
import { createHash } from 'node:crypto';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { canonicalJson, scenarioFingerprint, sha256Hex } from '../../models/scenario/fingerprint.ts';
import { readSample } from './helpers.ts';

const bytes = (text: string) => new TextEncoder().encode(text);

describe('sha256Hex', () => {
  it('gives the published digests of "abc" and of the empty string', () => {
    // FIPS 180-2, Appendix B.1 (one-block message "abc"); the empty-string digest is the commonly quoted value, checked below against node:crypto as well.
    expect(sha256Hex(bytes('abc'))).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    expect(sha256Hex(bytes(''))).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
  });

  it('equals node:crypto on every length around the 64-byte block and padding boundaries', () => {
    // Lengths 0..200 cover one, two and three blocks and the 55/56-byte padding edge.
    for (let n = 0; n <= 200; n++) {
      const data = new Uint8Array(n).map((_, i) => (i * 37 + n) & 0xff);
      expect(sha256Hex(data)).toBe(createHash('sha256').update(data).digest('hex'));
    }
  });

  it('equals node:crypto on arbitrary text, including characters outside ASCII', () => {
    fc.assert(
      fc.property(fc.string({ unit: 'grapheme', maxLength: 300 }), (s) => {
        expect(sha256Hex(bytes(s))).toBe(createHash('sha256').update(s, 'utf8').digest('hex'));
      }),
      { numRuns: 200 },
    );
  });
});

describe('canonicalJson and scenarioFingerprint', () => {
  it('sorts keys at every depth and keeps array order', () => {
    expect(canonicalJson({ b: 1, a: { d: [3, { z: 1, y: 2 }], c: 'µ' } })).toBe('{"a":{"c":"µ","d":[3,{"y":2,"z":1}]},"b":1}');
  });

  it('does not depend on the order keys were written in', () => {
    const brennock = readSample('brennock-oral-bid');
    const reordered = Object.fromEntries(Object.entries(brennock).reverse());
    expect(JSON.stringify(reordered)).not.toBe(JSON.stringify(brennock));
    expect(scenarioFingerprint(reordered)).toBe(scenarioFingerprint(brennock));
  });

  it('is the first 12 hex digits of SHA-256 over the canonical JSON', () => {
    const brennock = readSample('brennock-oral-bid');
    const expected = createHash('sha256').update(canonicalJson(brennock), 'utf8').digest('hex').slice(0, 12);
    expect(scenarioFingerprint(brennock)).toBe(expected);
    expect(scenarioFingerprint(brennock)).toMatch(/^[0-9a-f]{12}$/);
  });

  it('changes when any value changes', () => {
    const brennock = readSample('brennock-oral-bid');
    const changed = structuredClone(brennock) as { doses: { amount: string }[] };
    changed.doses[0].amount = '401 mg';
    expect(scenarioFingerprint(changed)).not.toBe(scenarioFingerprint(brennock));
  });
});
