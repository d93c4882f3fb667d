// The catalogue of hostile request bodies: every class a hand-written client can send, each derived from a
// route's valid body and body schema, so a route gets them all from its one table entry. Deterministic: the
// same route and valid body give the same bodies in the same order, every run.
import { brotliCompressSync, deflateSync, gzipSync } from 'node:zlib';
import type { ZodType } from 'zod';

export const hostileClasses = [
  'malformed',
  'non-finite',
  'huge-number',
  'deep-nesting',
  'long-string',
  'prototype-key',
  'wrong-type',
  'oversized',
  'gzip',
  'content-type',
] as const;
export type HostileClass = (typeof hostileClasses)[number];

export interface HostileBody {
  cls: HostileClass;
  label: string;
  body: Buffer;
  /** Content-Type (application/json unless the class is about it) and Content-Encoding. */
  headers: Record<string, string>;
  chunked?: boolean;
}

type JsonType = 'string' | 'number' | 'boolean' | 'null' | 'array' | 'object';
const jsonTypes: JsonType[] = ['string', 'number', 'boolean', 'null', 'array', 'object'];
/** One value per JSON type; "1" and [1] are what a lax coercion would read as the number 1. */
const sampleOf: Record<JsonType, unknown> = { string: '1', number: 1, boolean: true, null: null, array: [1], object: {} };

export type FieldPath = (string | number)[];
export interface Field {
  path: FieldPath;
  /** The JSON types the field accepts; null when the schema does not say (any, unknown, custom). */
  types: Set<JsonType> | null;
}

const MiB = 1024 * 1024;
/** Nesting depth of the deep bodies: far past any legitimate document, well inside what JSON.parse survives. */
export const deepLevels = 10_000;

const typeOfJson = (v: unknown): JsonType => (v === null ? 'null' : Array.isArray(v) ? 'array' : (typeof v as JsonType));

// --- fields: from the valid body and from the zod schema ------------------------------------------------

interface ZodDefLike {
  type: string;
  shape?: Record<string, ZodLike>;
  innerType?: ZodLike;
  in?: ZodLike;
  options?: ZodLike[];
  element?: ZodLike;
  values?: unknown[];
  entries?: Record<string, unknown>;
  left?: ZodLike;
  getter?: () => ZodLike;
  items?: ZodLike[];
}
interface ZodLike {
  _zod: { def: ZodDefLike };
}
const defOf = (s: ZodLike): ZodDefLike => s._zod.def;

/** Wrappers whose accepted input is their inner schema's (plus null for nullable). */
function unwrap(s: ZodLike, depth = 0): ZodLike {
  const d = defOf(s);
  if (depth > 20) return s;
  if (d.innerType) return unwrap(d.innerType, depth + 1);
  if (d.type === 'pipe' && d.in) return unwrap(d.in, depth + 1);
  if (d.type === 'lazy' && d.getter) return unwrap(d.getter(), depth + 1);
  if (d.type === 'intersection' && d.left) return unwrap(d.left, depth + 1);
  return s;
}

/** The JSON types a schema accepts, as the request's JSON arrives (before any coercion). */
function acceptedTypes(s: ZodLike, depth = 0): Set<JsonType> | null {
  const d = defOf(s);
  if (depth > 20) return null;
  switch (d.type) {
    case 'nullable': {
      const inner = acceptedTypes(d.innerType!, depth + 1);
      return inner && new Set([...inner, 'null' as const]);
    }
    case 'optional':
    case 'default':
    case 'prefault':
    case 'readonly':
    case 'catch':
    case 'nonoptional':
    case 'pipe':
    case 'lazy':
    case 'intersection':
      return acceptedTypes(unwrap(s), depth + 1);
    case 'union': {
      const all = new Set<JsonType>();
      for (const o of d.options ?? []) {
        const t = acceptedTypes(o, depth + 1);
        if (!t) return null;
        t.forEach((x) => all.add(x));
      }
      return all;
    }
    case 'string':
    case 'template_literal':
      return new Set(['string']);
    case 'number':
    case 'int':
      return new Set(['number']);
    case 'boolean':
      return new Set(['boolean']);
    case 'null':
      return new Set(['null']);
    case 'array':
    case 'tuple':
      return new Set(['array']);
    case 'object':
    case 'record':
      return new Set(['object']);
    case 'literal':
      return new Set((d.values ?? []).map(typeOfJson));
    case 'enum':
      return new Set(Object.values(d.entries ?? {}).map(typeOfJson));
    default:
      return null;
  }
}

function schemaFields(s: ZodLike, path: FieldPath, out: Field[], depth: number): void {
  if (depth > 8) return;
  const d = defOf(unwrap(s));
  if (d.type === 'object' && d.shape) {
    for (const [key, child] of Object.entries(d.shape)) {
      out.push({ path: [...path, key], types: acceptedTypes(child) });
      schemaFields(child, [...path, key], out, depth + 1);
    }
  } else if (d.type === 'array' && d.element) {
    out.push({ path: [...path, 0], types: acceptedTypes(d.element) });
    schemaFields(d.element, [...path, 0], out, depth + 1);
  } else if (d.type === 'union') {
    for (const o of d.options ?? []) schemaFields(o, path, out, depth + 1);
  }
}

function valueFields(v: unknown, path: FieldPath, out: Field[]): void {
  if (Array.isArray(v)) {
    if (v.length > 0) {
      out.push({ path: [...path, 0], types: new Set([typeOfJson(v[0])]) });
      valueFields(v[0], [...path, 0], out);
    }
  } else if (v && typeof v === 'object') {
    for (const [key, child] of Object.entries(v)) {
      out.push({ path: [...path, key], types: new Set([typeOfJson(child)]) });
      valueFields(child, [...path, key], out);
    }
  }
}

/**
 * Every field a body may carry: each key of the schema's objects (optional ones included, the first element
 * standing for an array's elements), and each key of the valid body the schema does not describe. The
 * schema's accepted types win over the type the valid body happens to use.
 */
export function fieldsOf(valid: unknown, schema?: ZodType): Field[] {
  const found: Field[] = [];
  if (schema) schemaFields(schema as unknown as ZodLike, [], found, 0);
  const fromSchema = found.length;
  valueFields(valid, [], found);
  const merged = new Map<string, Field>();
  found.forEach((f, i) => {
    const key = JSON.stringify(f.path);
    const seen = merged.get(key);
    if (!seen) merged.set(key, { path: f.path, types: f.types && new Set(f.types) });
    else if (i < fromSchema && seen.types) {
      // The same key in two union options: it accepts what either accepts.
      if (f.types) f.types.forEach((t) => seen.types!.add(t));
      else seen.types = null;
    }
  });
  return [...merged.values()];
}

// --- building bodies ------------------------------------------------------------------------------------

const clone = <T>(v: T): T => structuredClone(v);

/** Sets `path` in a copy of `root`, creating the objects and arrays on the way. */
function setAt(root: unknown, path: FieldPath, value: unknown): unknown {
  const copy = (root && typeof root === 'object' ? clone(root) : {}) as Record<string | number, unknown>;
  let node = copy;
  path.forEach((key, i) => {
    if (i === path.length - 1) {
      // defineProperty, so a key named __proto__ becomes an own key that JSON.stringify writes out.
      Object.defineProperty(node, key, { value, enumerable: true, writable: true, configurable: true });
      return;
    }
    const next = node[key];
    if (!next || typeof next !== 'object') node[key] = typeof path[i + 1] === 'number' ? [] : {};
    node = node[key] as Record<string | number, unknown>;
  });
  return copy;
}

const SENTINEL = '\u0000hostile-literal\u0000';
const sentinelText = JSON.stringify(SENTINEL);

/** The body with the value at `path` written as `literal`: raw JSON text (or bytes) no serializer would write. */
function withLiteral(valid: unknown, path: FieldPath, literal: string | Buffer): Buffer {
  const text = JSON.stringify(path.length === 0 ? SENTINEL : setAt(valid, path, SENTINEL));
  const at = text.indexOf(sentinelText);
  return Buffer.concat([Buffer.from(text.slice(0, at)), Buffer.from(literal), Buffer.from(text.slice(at + sentinelText.length))]);
}

const json = (v: unknown) => Buffer.from(JSON.stringify(v));
const jsonType = { 'Content-Type': 'application/json' };

export interface BodyPlan {
  /** The route's valid JSON body ({} for a route that takes none). */
  valid: unknown;
  fields: Field[];
  /** The most the route's JSON parser accepts, in bytes. */
  limit: number;
  /** At most this many bodies of each class (the first ones), for routes that take no JSON body. */
  perClass?: number;
}

/** Every hostile body for a route, class by class, without duplicates within a class. */
export function* hostileBodies(plan: BodyPlan): Generator<HostileBody> {
  for (const cls of hostileClasses) {
    const seen = new Set<string>();
    let count = 0;
    for (const b of byClass[cls](plan)) {
      const key = `${JSON.stringify(b.headers)}|${b.chunked ?? false}|${b.body.length}|${b.body.subarray(0, 4096).toString('base64')}|${b.body.subarray(-4096).toString('base64')}`;
      if (seen.has(key)) continue;
      seen.add(key);
      yield b;
      if (plan.perClass !== undefined && ++count >= plan.perClass) break;
    }
  }
}

type Maker = (plan: BodyPlan) => Iterable<HostileBody>;

const of = (cls: HostileClass, label: string, body: Buffer | string, headers: Record<string, string> = jsonType, chunked?: boolean): HostileBody => ({
  cls,
  label,
  body: typeof body === 'string' ? Buffer.from(body) : body,
  headers,
  chunked,
});

const pathLabel = (p: FieldPath) => p.map((k) => (typeof k === 'number' ? `[${k}]` : `.${k}`)).join('').replace(/^\./, '');

function firstField(plan: BodyPlan): FieldPath {
  return plan.fields[0]?.path ?? ['a'];
}
function fieldsTaking(plan: BodyPlan, type: JsonType): FieldPath[] {
  return plan.fields.filter((f) => f.types?.has(type)).map((f) => f.path);
}
function stringTargets(plan: BodyPlan): FieldPath[] {
  const s = fieldsTaking(plan, 'string');
  return s.length > 0 ? s : [firstField(plan)];
}
function numberTargets(plan: BodyPlan): FieldPath[] {
  const n = fieldsTaking(plan, 'number');
  return n.length > 0 ? n : [firstField(plan)];
}

/** A body of valid JSON whose first string field holds `length` characters of `char`. */
function padded(plan: BodyPlan, length: number, char = 'a', path = stringTargets(plan)[0]): Buffer {
  return withLiteral(plan.valid, path, JSON.stringify(char.repeat(length)));
}
/** Characters that keep a body with one long string under the route's limit. */
const roomFor = (plan: BodyPlan) => Math.max(0, Math.min(MiB, plan.limit - Buffer.byteLength(JSON.stringify(plan.valid)) - 256));

const invalidUtf8 = [
  ['a lone continuation byte', [0xff]],
  ['an overlong slash', [0xc0, 0xaf]],
  ['a truncated sequence', [0xe2, 0x82]],
  ['an encoded surrogate', [0xed, 0xa0, 0x80]],
] as const;

const hugeLiterals = [
  '1e308',
  '9223372036854775808', // 2^63: past a signed 64-bit column
  '-0',
  '9'.repeat(400), // parses to Infinity
  '-1e308',
  '-9223372036854775809',
  '18446744073709551616', // 2^64
  '9007199254740993', // 2^53 + 1: no double holds it
  '3.4028236e38', // just past the largest float32
  '1e39',
  '1e-400', // underflows to 0
  `0.${'0'.repeat(400)}1`,
];
const distinctHuge = ['1e308', '9223372036854775808', '-0', '3.4028236e38'];

/** The oversized body of the last valid body asked for: a 64 MiB one is built once for all its uses. */
let oversizedCache: { valid: unknown; limit: number; body: Buffer } | null = null;
function oversizedBody(plan: BodyPlan): Buffer {
  if (oversizedCache && oversizedCache.valid === plan.valid && oversizedCache.limit === plan.limit) return oversizedCache.body;
  oversizedCache = null;
  const body = padded(plan, plan.limit + 1024);
  oversizedCache = { valid: plan.valid, limit: plan.limit, body };
  return body;
}

const byClass: Record<HostileClass, Maker> = {
  *malformed(plan) {
    const text = JSON.stringify(plan.valid);
    yield of('malformed', 'truncated', text.slice(0, -1));
    yield* invalidUtf8.map(([what, bytes]) =>
      of('malformed', `invalid UTF-8: ${what}`, withLiteral(plan.valid, stringTargets(plan)[0], Buffer.concat([Buffer.from('"reef'), Buffer.from(bytes), Buffer.from('"')]))),
    );
    yield of('malformed', 'not JSON', 'this is not JSON');
    yield of('malformed', 'cut in the middle', text.slice(0, Math.ceil(text.length / 2)));
    yield of('malformed', 'single quotes', `{'a': 'b'}`);
    yield of('malformed', 'trailing comma', `${text.slice(0, -1)}${text.length > 2 ? ',' : ''}"a":1,}`);
    yield of('malformed', 'trailing garbage', `${text}x`);
    yield of('malformed', 'two documents', `${text}${text}`);
    yield of('malformed', 'empty', '');
    yield of('malformed', 'UTF-16 with a byte-order mark', Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]));
    for (const p of stringTargets(plan)) {
      // Valid JSON (RFC 8259 §8.2 allows the escape) but not Unicode text: a lone surrogate.
      yield of('malformed', `lone surrogate in ${pathLabel(p)}`, withLiteral(plan.valid, p, '"reef \\ud800"'));
      yield of('malformed', `NUL in ${pathLabel(p)}`, withLiteral(plan.valid, p, '"reef\\u0000"'));
    }
  },
  *'non-finite'(plan) {
    // NaN and Infinity are not JSON: the parser refuses them wherever they stand, so one field shows it.
    // 1e999 is JSON and parses to Infinity, which reaches every field's own check.
    const [first, ...rest] = numberTargets(plan);
    for (const literal of ['NaN', 'Infinity', '-Infinity', '1e999', '-1e999']) yield of('non-finite', `${literal} in ${pathLabel(first)}`, withLiteral(plan.valid, first, literal));
    for (const p of rest) yield of('non-finite', `1e999 in ${pathLabel(p)}`, withLiteral(plan.valid, p, '1e999'));
    yield of('non-finite', 'NaN as the body', 'NaN');
  },
  *'huge-number'(plan) {
    // Every spelling at the first numeric field; at the others the values that cross a different limit: the
    // largest doubles, a signed 64-bit column, the sign of zero, float32.
    const [first, ...rest] = numberTargets(plan);
    for (const literal of hugeLiterals) yield of('huge-number', `${literal.slice(0, 24)} in ${pathLabel(first)}`, withLiteral(plan.valid, first, literal));
    for (const p of rest) for (const literal of distinctHuge) yield of('huge-number', `${literal.slice(0, 24)} in ${pathLabel(p)}`, withLiteral(plan.valid, p, literal));
  },
  *'deep-nesting'(plan) {
    yield of('deep-nesting', `arrays ${deepLevels} deep`, `${'['.repeat(deepLevels)}${']'.repeat(deepLevels)}`);
    yield of('deep-nesting', `objects ${deepLevels} deep`, `${'{"a":'.repeat(deepLevels)}1${'}'.repeat(deepLevels)}`);
    const p = firstField(plan);
    yield of('deep-nesting', `arrays ${deepLevels} deep in ${pathLabel(p)}`, withLiteral(plan.valid, p, `${'['.repeat(deepLevels)}${']'.repeat(deepLevels)}`));
    yield of('deep-nesting', `objects ${deepLevels} deep in ${pathLabel(p)}`, withLiteral(plan.valid, p, `${'{"a":'.repeat(deepLevels)}1${'}'.repeat(deepLevels)}`));
  },
  *'long-string'(plan) {
    const room = roomFor(plan);
    for (const p of stringTargets(plan)) yield of('long-string', `${room} characters in ${pathLabel(p)}`, padded(plan, room, 'a', p));
    yield of('long-string', `${Math.floor(room / 3)} three-byte characters`, padded(plan, Math.floor(room / 3), '\u20ac'));
    yield of('long-string', `a key of ${room} characters`, longKey(plan, room));
  },
  *'prototype-key'(plan) {
    const text = JSON.stringify(plan.valid);
    const rest = text.length > 2 ? `,${text.slice(1)}` : '}';
    yield of('prototype-key', '__proto__ beside the fields', `{"__proto__":{"isAdmin":true,"role":"admin","polluted":true}${rest}`);
    yield of('prototype-key', 'constructor.prototype beside the fields', `{"constructor":{"prototype":{"isAdmin":true,"polluted":true}}${rest}`);
    yield of('prototype-key', 'the valid body under __proto__', `{"__proto__":${text}}`);
    yield of('prototype-key', 'the valid body under constructor.prototype', `{"constructor":{"prototype":${text}}}`);
    yield of('prototype-key', 'prototype beside the fields', `{"prototype":{"isAdmin":true}${rest}`);
    for (const p of fieldsTaking(plan, 'object')) {
      yield of('prototype-key', `__proto__ inside ${pathLabel(p)}`, json(setAt(plan.valid, [...p, '__proto__'], { polluted: true })));
    }
  },
  *'wrong-type'(plan) {
    for (const t of jsonTypes.filter((x) => x !== 'object')) yield of('wrong-type', `${t} as the body`, t === 'array' ? `[${JSON.stringify(plan.valid)}]` : JSON.stringify(sampleOf[t]));
    for (const f of plan.fields) {
      for (const t of jsonTypes.filter((x) => !f.types?.has(x))) yield of('wrong-type', `${t} in ${pathLabel(f.path)}`, json(setAt(plan.valid, f.path, sampleOf[t])));
    }
  },
  *oversized(plan) {
    const body = oversizedBody(plan);
    yield of('oversized', `${body.length} bytes, length declared`, body);
    yield of('oversized', `${body.length} bytes, chunked`, body, jsonType, true);
  },
  *gzip(plan) {
    const text = Buffer.from(JSON.stringify(plan.valid));
    yield of('gzip', 'the valid body gzipped', gzipSync(text), { ...jsonType, 'Content-Encoding': 'gzip' });
    const bomb = oversizedBody(plan);
    yield of('gzip', `gzip inflating to ${bomb.length} bytes`, gzipSync(bomb), { ...jsonType, 'Content-Encoding': 'gzip' });
    yield of('gzip', 'the valid body deflated', deflateSync(text), { ...jsonType, 'Content-Encoding': 'deflate' });
    yield of('gzip', 'the valid body in brotli', brotliCompressSync(text), { ...jsonType, 'Content-Encoding': 'br' });
    yield of('gzip', 'a truncated gzip stream', gzipSync(text).subarray(0, 12), { ...jsonType, 'Content-Encoding': 'gzip' });
    yield of('gzip', 'gzip declared, plain body', text, { ...jsonType, 'Content-Encoding': 'gzip' });
    yield of('gzip', 'an unknown encoding', text, { ...jsonType, 'Content-Encoding': 'x-hostile' });
  },
  *'content-type'(plan) {
    const text = JSON.stringify(plan.valid);
    yield of('content-type', 'text/plain', text, { 'Content-Type': 'text/plain' });
    yield of('content-type', 'multipart without a boundary', text, { 'Content-Type': 'multipart/form-data' });
    yield of('content-type', 'JSON declared as Latin-1', text, { 'Content-Type': 'application/json; charset=latin1' });
    yield of('content-type', 'JSON declared as UTF-16', Buffer.from(text, 'utf16le'), { 'Content-Type': 'application/json; charset=utf-16' });
    yield of('content-type', 'form-encoded', 'a=1&role=admin', { 'Content-Type': 'application/x-www-form-urlencoded' });
    yield of('content-type', 'octet-stream', text, { 'Content-Type': 'application/octet-stream' });
    yield of('content-type', 'no Content-Type', text, {});
  },
};

function longKey(plan: BodyPlan, room: number): Buffer {
  const text = JSON.stringify(plan.valid);
  return Buffer.from(`{${JSON.stringify('k'.repeat(room))}:1${text.length > 2 ? `,${text.slice(1)}` : '}'}`);
}
