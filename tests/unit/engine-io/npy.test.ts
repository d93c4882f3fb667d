import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readNpy, writeNpy, writeNpyArray } from '../../../server/engine/io/npy';

/**
 * Builds a .npy file byte by byte as NEP 1 ("A simple file format for NumPy arrays") specifies:
 * "\x93NUMPY", major, minor, header length (uint16 LE for 1.0, uint32 LE for 2.0), an ASCII dict literal padded
 * with spaces and ended by "\n" so that the data starts at a multiple of 64 bytes, then the raw array bytes.
 */
function npyBytes(header: string, data: Uint8Array, major = 1): Uint8Array {
  const prefix = major === 1 ? 10 : 12;
  const padded = header + ' '.repeat((64 - ((prefix + header.length + 1) % 64)) % 64) + '\n';
  const out = new Uint8Array(prefix + padded.length + data.length);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, major, 0]);
  const view = new DataView(out.buffer);
  if (major === 1) view.setUint16(8, padded.length, true);
  else view.setUint32(8, padded.length, true);
  for (let i = 0; i < padded.length; i += 1) out[prefix + i] = padded.charCodeAt(i);
  out.set(data, prefix + padded.length);
  return out;
}

function f32le(values: number[]): Uint8Array {
  const b = new Uint8Array(values.length * 4);
  values.forEach((v, i) => new DataView(b.buffer).setFloat32(i * 4, v, true));
  return b;
}

function f64le(values: number[]): Uint8Array {
  const b = new Uint8Array(values.length * 8);
  values.forEach((v, i) => new DataView(b.buffer).setFloat64(i * 8, v, true));
  return b;
}

describe('.npy reader (NEP 1)', () => {
  it('reads a version 1.0 float32 2-D C-order array', () => {
    const file = npyBytes("{'descr': '<f4', 'fortran_order': False, 'shape': (2, 3), }", f32le([1, 2, 3, 4.5, -5, 6]));
    const m = readNpy(file);
    expect(m).toMatchObject({ rows: 2, cols: 3, sourceDtype: 'float32' });
    expect(Array.from(m.data)).toEqual([1, 2, 3, 4.5, -5, 6]);
  });

  it('reads float64 and narrows it to float32', () => {
    const m = readNpy(npyBytes("{'descr': '<f8', 'fortran_order': False, 'shape': (1, 2), }", f64le([0.1, 1e10])));
    expect(m.sourceDtype).toBe('float64');
    expect(Array.from(m.data)).toEqual([Math.fround(0.1), Math.fround(1e10)]);
  });

  it('reads a 1-D array as N × 1', () => {
    const m = readNpy(npyBytes("{'descr': '<f4', 'fortran_order': False, 'shape': (3,), }", f32le([7, 8, 9])));
    expect(m).toMatchObject({ rows: 3, cols: 1 });
  });

  it('reads a version 2.0 header with its 4-byte length', () => {
    const m = readNpy(npyBytes("{'descr': '<f4', 'fortran_order': False, 'shape': (1, 1), }", f32le([42]), 2));
    expect(Array.from(m.data)).toEqual([42]);
  });

  it('accepts keys in any order and double quotes, as a Python dict literal allows', () => {
    const m = readNpy(npyBytes('{"shape": (1, 2), "fortran_order": False, "descr": "<f4"}', f32le([1, 2])));
    expect(m.cols).toBe(2);
  });

  it.each([
    ['Fortran order', "{'descr': '<f4', 'fortran_order': True, 'shape': (2, 2), }", f32le([1, 2, 3, 4]), /Fortran-order/],
    ['an integer dtype', "{'descr': '<i4', 'fortran_order': False, 'shape': (2,), }", f32le([1, 2]), /unsupported dtype <i4/],
    ['big-endian floats', "{'descr': '>f4', 'fortran_order': False, 'shape': (2,), }", f32le([1, 2]), /big-endian/],
    ['three dimensions', "{'descr': '<f4', 'fortran_order': False, 'shape': (1, 1, 2), }", f32le([1, 2]), /1-D or 2-D/],
    ['missing data', "{'descr': '<f4', 'fortran_order': False, 'shape': (2, 2), }", f32le([1, 2, 3]), /truncated data/],
    ['trailing bytes', "{'descr': '<f4', 'fortran_order': False, 'shape': (1,), }", f32le([1, 2]), /unexpected bytes/],
    ['a non-finite value', "{'descr': '<f4', 'fortran_order': False, 'shape': (1, 2), }", f32le([1, Number.NaN]), /row 0, column 1 is not a finite number/],
    ['a malformed header', "{'descr': '<f4', 'fortran_order': False, 'shape': (2, x), }", f32le([1, 2]), /bad \.npy header/],
  ])('rejects %s with a clear message', (_what, header, data, pattern) => {
    expect(() => readNpy(npyBytes(header, data), 'v.npy')).toThrow(pattern);
  });

  it('rejects a file without the magic string', () => {
    expect(() => readNpy(new TextEncoder().encode('PK\u0003\u0004 zip, not npy'), 'x.npy')).toThrow(/x\.npy: not a \.npy file/);
  });

  it('writes files its own reader and the NEP 1 layout agree on (64-byte aligned data)', () => {
    const file = writeNpy(Float32Array.from([1, 2, 3, 4, 5, 6]), 3, 2);
    const headerLength = file.readUInt16LE(8);
    expect((10 + headerLength) % 64).toBe(0);
    expect(Array.from(readNpy(file).data)).toEqual([1, 2, 3, 4, 5, 6]);
  });
});

// Cross-check with numpy itself where it is importable (Debian's python3-numpy); skipped visibly otherwise.
const hasNumpy = spawnSync('python3', ['-c', 'import numpy'], { stdio: 'ignore' }).status === 0;
const dir = mkdtempSync(join(tmpdir(), 'cw-npy-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('.npy files written by numpy', () => {
  it.skipIf(!hasNumpy)('reads float32 and float64 arrays numpy.save wrote, and numpy reads ours', () => {
    const script = [
      'import numpy as np, sys',
      'd = sys.argv[1]',
      'a = (np.arange(12, dtype=np.float64).reshape(4, 3) / 8 - 0.5)',
      "np.save(d + '/f8.npy', a)",
      "np.save(d + '/f4.npy', a.astype(np.float32))",
      "np.save(d + '/fortran.npy', np.asfortranarray(a))",
      "b = np.load(d + '/ours.npy')",
      "assert b.dtype == np.float32 and b.shape == (2, 2) and b.tolist() == [[1.5, 2.0], [-3.0, 4.25]], b",
    ].join('\n');
    writeOurs();
    const run = spawnSync('python3', ['-c', script, dir], { encoding: 'utf8' });
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
    const expected = Array.from({ length: 12 }, (_, i) => i / 8 - 0.5);
    const f8 = readNpy(readFileSync(join(dir, 'f8.npy')));
    const f4 = readNpy(readFileSync(join(dir, 'f4.npy')));
    expect(f8).toMatchObject({ rows: 4, cols: 3, sourceDtype: 'float64' });
    expect(f4).toMatchObject({ rows: 4, cols: 3, sourceDtype: 'float32' });
    expect(Array.from(f8.data)).toEqual(expected);
    expect(Array.from(f4.data)).toEqual(expected);
    expect(() => readNpy(readFileSync(join(dir, 'fortran.npy')))).toThrow(/Fortran-order/);
  });
});

function writeOurs() {
  writeFileSync(join(dir, 'ours.npy'), writeNpy(Float32Array.from([1.5, 2, -3, 4.25]), 2, 2));
}

describe('writeNpyArray', () => {
  /** A reader written from NEP 1 alone: magic, version, uint16 LE header length, the dict text, the raw values. */
  function parse(bytes: Buffer): { descr: string; shape: string; data: Buffer; aligned: boolean } {
    expect(bytes.subarray(0, 6)).toEqual(Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]));
    expect([bytes[6], bytes[7]]).toEqual([1, 0]);
    const length = bytes.readUInt16LE(8);
    const header = bytes.subarray(10, 10 + length).toString('latin1');
    expect(header.endsWith('\n')).toBe(true);
    return {
      descr: /'descr': '([^']+)'/.exec(header)![1],
      shape: /'shape': (\([^)]*\))/.exec(header)![1],
      data: bytes.subarray(10 + length),
      aligned: (10 + length) % 64 === 0,
    };
  }

  it('writes uint16 index maps little-endian with their 2-D shape, data on a 64-byte boundary', () => {
    const out = parse(writeNpyArray(Uint16Array.from([1, 258, 65535, 0, 7, 9]), [2, 3]));
    expect(out).toMatchObject({ descr: '<u2', shape: '(2, 3)', aligned: true });
    expect([0, 1, 2, 3, 4, 5].map((k) => out.data.readUInt16LE(2 * k))).toEqual([1, 258, 65535, 0, 7, 9]);
  });

  it('writes uint8 as |u1 (no byte order for one byte) and uint32 as <u4', () => {
    expect(parse(writeNpyArray(Uint8Array.from([3, 4]), [1, 2])).descr).toBe('|u1');
    const u4 = parse(writeNpyArray(Uint32Array.from([70000]), [1, 1]));
    expect(u4.descr).toBe('<u4');
    expect(u4.data.readUInt32LE(0)).toBe(70000);
  });

  it('spells a 1-D shape as a one-element Python tuple', () => {
    expect(parse(writeNpyArray(Float64Array.from([0.5, 1.5, 2.5]), [3])).shape).toBe('(3,)');
  });

  it('refuses data that does not fill the shape', () => {
    expect(() => writeNpyArray(new Float32Array(5), [2, 3])).toThrow(/does not fit shape/);
  });

  it('writes float32 that readNpy reads back', () => {
    const data = Float32Array.from([0.1, -2, 3e10, 4]);
    expect(readNpy(writeNpyArray(data, [2, 2])).data).toEqual(data);
  });
});
