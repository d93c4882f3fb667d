import { EngineInputError } from '../input-error';

/**
 * Reader for NumPy .npy files as specified in NEP 1 ("A simple file format for NumPy arrays"):
 * magic "\x93NUMPY", major and minor version bytes, a little-endian header length (uint16 in version 1.0,
 * uint32 in 2.0 and 3.0), then a Python dict literal with 'descr', 'fortran_order' and 'shape', then raw data.
 * We accept float32 ('<f4') and float64 ('<f8') in C order, 1-D (read as N × 1) or 2-D.
 */
export interface NpyMatrix {
  rows: number;
  cols: number;
  /** rows × cols, row-major; float64 input is narrowed to float32, the engine's storage type. */
  data: Float32Array;
  sourceDtype: 'float32' | 'float64';
}

const MAGIC = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // \x93 N U M P Y

function fail(name: string, reason: string): never {
  throw new EngineInputError('ENGINE_INVALID_NPY', `${name}: ${reason}`);
}

type PyValue = string | boolean | number[] | number;

/** Parses the restricted Python literal NEP 1 headers use: a dict of str keys to str, bool, int or tuple-of-int values. */
function parseHeaderDict(text: string, name: string): Record<string, PyValue> {
  let i = 0;
  const ws = () => {
    while (i < text.length && /\s/.test(text[i])) i += 1;
  };
  const expect = (ch: string) => {
    ws();
    if (text[i] !== ch) fail(name, `bad .npy header: expected "${ch}" at offset ${i}`);
    i += 1;
  };
  const str = (): string => {
    ws();
    const q = text[i];
    if (q !== "'" && q !== '"') fail(name, `bad .npy header: expected a quoted string at offset ${i}`);
    const end = text.indexOf(q, i + 1);
    if (end < 0) fail(name, 'bad .npy header: unterminated string');
    const s = text.slice(i + 1, end);
    i = end + 1;
    return s;
  };
  const int = (): number => {
    ws();
    const m = /^\d+/.exec(text.slice(i));
    if (!m) fail(name, `bad .npy header: expected an integer at offset ${i}`);
    i += m[0].length;
    // Python 2 era writers append L to longs.
    if (text[i] === 'L') i += 1;
    return Number(m[0]);
  };
  const value = (): PyValue => {
    ws();
    if (text[i] === "'" || text[i] === '"') return str();
    if (text.startsWith('True', i)) {
      i += 4;
      return true;
    }
    if (text.startsWith('False', i)) {
      i += 5;
      return false;
    }
    if (text[i] === '(') {
      i += 1;
      const items: number[] = [];
      ws();
      while (text[i] !== ')') {
        items.push(int());
        ws();
        if (text[i] === ',') i += 1;
        else if (text[i] !== ')') fail(name, `bad .npy header: malformed shape tuple at offset ${i}`);
        ws();
      }
      i += 1;
      return items;
    }
    return int();
  };
  const out: Record<string, PyValue> = {};
  expect('{');
  ws();
  while (text[i] !== '}') {
    const key = str();
    expect(':');
    out[key] = value();
    ws();
    if (text[i] === ',') i += 1;
    else if (text[i] !== '}') fail(name, `bad .npy header: expected "," or "}" at offset ${i}`);
    ws();
    if (i >= text.length) fail(name, 'bad .npy header: unterminated dict');
  }
  return out;
}

export function readNpy(bytes: Uint8Array, name = 'array.npy'): NpyMatrix {
  if (bytes.length < 10 || !MAGIC.every((b, k) => bytes[k] === b)) fail(name, 'not a .npy file (missing \\x93NUMPY magic)');
  const major = bytes[6];
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let headerLength: number;
  let headerStart: number;
  if (major === 1) {
    headerLength = view.getUint16(8, true);
    headerStart = 10;
  } else if (major === 2 || major === 3) {
    if (bytes.length < 12) fail(name, 'truncated .npy header');
    headerLength = view.getUint32(8, true);
    headerStart = 12;
  } else {
    fail(name, `unsupported .npy format version ${major}.${bytes[7]}`);
  }
  const dataStart = headerStart + headerLength;
  if (dataStart > bytes.length) fail(name, 'truncated .npy header');
  const headerText = new TextDecoder(major === 3 ? 'utf-8' : 'latin1').decode(bytes.subarray(headerStart, dataStart));
  const header = parseHeaderDict(headerText, name);

  const descr = header.descr;
  const fortran = header.fortran_order;
  const shape = header.shape;
  if (typeof descr !== 'string') fail(name, "bad .npy header: 'descr' missing");
  if (typeof fortran !== 'boolean') fail(name, "bad .npy header: 'fortran_order' missing");
  if (!Array.isArray(shape)) fail(name, "bad .npy header: 'shape' missing");
  let sourceDtype: NpyMatrix['sourceDtype'];
  if (descr === '<f4') sourceDtype = 'float32';
  else if (descr === '<f8') sourceDtype = 'float64';
  else if (descr === '>f4' || descr === '>f8') fail(name, `big-endian dtype ${descr} is not supported; save as little-endian ('<f4' or '<f8')`);
  else fail(name, `unsupported dtype ${descr}; expected float32 ('<f4') or float64 ('<f8')`);
  if (fortran) fail(name, 'Fortran-order arrays are not supported; save a C-order array (numpy.ascontiguousarray)');
  if (shape.length < 1 || shape.length > 2) fail(name, `expected a 1-D or 2-D array, got shape (${shape.join(', ')})`);
  const rows = shape[0];
  const cols = shape.length === 2 ? shape[1] : 1;
  if (rows < 1 || cols < 1) fail(name, `array is empty (shape (${shape.join(', ')}))`);

  const itemSize = sourceDtype === 'float32' ? 4 : 8;
  const expected = rows * cols * itemSize;
  const actual = bytes.length - dataStart;
  if (actual < expected) fail(name, `truncated data: shape (${shape.join(', ')}) needs ${expected} bytes, file has ${actual}`);
  if (actual > expected) fail(name, `${actual - expected} unexpected bytes after the data of shape (${shape.join(', ')})`);

  const data = new Float32Array(rows * cols);
  for (let k = 0; k < data.length; k += 1) {
    const v = itemSize === 4 ? view.getFloat32(dataStart + 4 * k, true) : view.getFloat64(dataStart + 8 * k, true);
    if (!Number.isFinite(v)) fail(name, `value at row ${Math.floor(k / cols)}, column ${k % cols} is not a finite number`);
    data[k] = v;
  }
  return { rows, cols, data, sourceDtype };
}

/** The typed arrays the writer takes, and their NEP 1 `descr` (little-endian; a one-byte type has no byte order, '|'). */
export type NpyWritable = Float32Array | Float64Array | Uint8Array | Uint16Array | Uint32Array | Int32Array;

function descrOf(data: NpyWritable): string {
  if (data instanceof Float32Array) return '<f4';
  if (data instanceof Float64Array) return '<f8';
  if (data instanceof Uint8Array) return '|u1';
  if (data instanceof Uint16Array) return '<u2';
  if (data instanceof Uint32Array) return '<u4';
  return '<i4';
}

/**
 * Writes a C-order array of any shape as .npy version 1.0 (NEP 1): magic, version 1.0, a uint16 little-endian header
 * length, the header dict padded with spaces and ended by a newline so the data starts on a 64-byte boundary, then
 * the values little-endian. A 1-D shape is written `(n,)`, as Python spells a one-element tuple.
 */
export function writeNpyArray(data: NpyWritable, shape: readonly number[]): Buffer {
  const count = shape.reduce((a, b) => a * b, 1);
  if (shape.length === 0 || shape.some((n) => !Number.isInteger(n) || n < 0) || data.length !== count) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `data length ${data.length} does not fit shape (${shape.join(', ')})`);
  }
  const tuple = shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
  let header = `{'descr': '${descrOf(data)}', 'fortran_order': False, 'shape': ${tuple}, }`;
  const pad = 64 - ((10 + header.length + 1) % 64);
  header = header + ' '.repeat(pad % 64) + '\n';
  const itemSize = data.BYTES_PER_ELEMENT;
  const out = Buffer.alloc(10 + header.length + data.length * itemSize);
  MAGIC.forEach((b, k) => (out[k] = b));
  out[6] = 1;
  out[7] = 0;
  out.writeUInt16LE(header.length, 8);
  out.write(header, 10, 'latin1');
  const view = new DataView(out.buffer, out.byteOffset, out.byteLength);
  const start = 10 + header.length;
  for (let k = 0; k < data.length; k += 1) {
    const at = start + itemSize * k;
    if (data instanceof Float32Array) view.setFloat32(at, data[k], true);
    else if (data instanceof Float64Array) view.setFloat64(at, data[k], true);
    else if (data instanceof Uint8Array) view.setUint8(at, data[k]);
    else if (data instanceof Uint16Array) view.setUint16(at, data[k], true);
    else if (data instanceof Uint32Array) view.setUint32(at, data[k], true);
    else view.setInt32(at, data[k], true);
  }
  return out;
}

/** Writes a 2-D float32 C-order array as .npy version 1.0 (header padded so data starts on a 64-byte boundary, per NEP 1). */
export function writeNpy(data: Float32Array, rows: number, cols: number): Buffer {
  if (data.length !== rows * cols) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `data length ${data.length} is not ${rows} × ${cols}`);
  return writeNpyArray(data, [rows, cols]);
}
