import { describe, expect, it } from 'vitest';
import { firstIllFormedString } from '../../../server/http/middleware/strict-utf8';

// Unicode 15, §3.9 (D89/D91): a well-formed UTF-16 string pairs every high surrogate with a following low one.
describe('firstIllFormedString', () => {
  it('accepts well-formed text, astral characters included', () => {
    expect(firstIllFormedString({ name: 'Seabed 🐚 tiles', list: ['a', { b: 'ü' }], n: 1, z: null })).toBeNull();
  });

  it('names the path of a lone high or low surrogate in a value', () => {
    expect(firstIllFormedString({ name: 'x\ud800' })).toBe('$.name');
    expect(firstIllFormedString({ training: { source: '\udc00y' } })).toBe('$.training.source');
    expect(firstIllFormedString({ list: ['ok', '\ud83d'] })).toBe('$.list[1]');
    // A low surrogate before its high one is not a pair.
    expect(firstIllFormedString(['\udc00\ud800'])).toBe('$[0]');
  });

  it('names a key that is not well-formed', () => {
    expect(firstIllFormedString({ ['k\ud800']: 1 })).toBe('$ (a key)');
  });

  it('walks deep nesting without recursion', () => {
    let deep: unknown = 'end\udfff';
    for (let i = 0; i < 20_000; i++) deep = [deep];
    expect(firstIllFormedString(deep)).toMatch(/^\$\[0\]/);
  });
});
