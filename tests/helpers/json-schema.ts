// A JSON Schema (draft 2020-12) validator for the keywords the API description uses, written from the
// specification (JSON Schema Core and Validation, 2020-12), because no general-purpose validator is installed.
// It refuses to judge a schema that uses any other keyword, so a schema it cannot read fails the test rather
// than passing it: adding a keyword to the document means adding it here.

export type Schema = boolean | { [keyword: string]: unknown };

export interface SchemaIssue {
  path: string;
  message: string;
}

/** Resolves a $ref (a JSON Pointer into the document, or an absolute URL) to its schema. */
export type RefResolver = (ref: string) => Schema;

// Annotations (Validation §9, and `format`, which 2020-12 treats as an annotation by default, §7.2.1).
const annotations = new Set(['title', 'description', 'default', 'examples', 'format', 'deprecated', 'readOnly', 'writeOnly', '$comment', '$schema', '$id', '$defs', 'contentMediaType', 'contentEncoding']);
const assertions = new Set([
  'type', 'const', 'enum', 'properties', 'required', 'additionalProperties', 'propertyNames', 'items', 'prefixItems', 'minItems', 'maxItems',
  'minLength', 'maxLength', 'pattern', 'minimum', 'maximum', 'exclusiveMinimum', 'exclusiveMaximum', 'anyOf', 'allOf', 'oneOf', 'not', '$ref',
]);

/** Every keyword a schema (and its subschemas) uses that this validator does not know; empty when it can judge it. */
export function unknownKeywords(schema: Schema, path = '#'): string[] {
  if (typeof schema === 'boolean') return [];
  const out: string[] = [];
  for (const [key, value] of Object.entries(schema)) {
    if (!annotations.has(key) && !assertions.has(key)) out.push(`${path}/${key}`);
    if (key === 'properties' || key === '$defs') {
      for (const [name, sub] of Object.entries(value as Record<string, Schema>)) out.push(...unknownKeywords(sub, `${path}/${key}/${name}`));
    } else if (['items', 'additionalProperties', 'propertyNames', 'not'].includes(key)) {
      out.push(...unknownKeywords(value as Schema, `${path}/${key}`));
    } else if (['prefixItems', 'anyOf', 'allOf', 'oneOf'].includes(key)) {
      (value as Schema[]).forEach((sub, i) => out.push(...unknownKeywords(sub, `${path}/${key}/${i}`)));
    }
  }
  return out;
}

const typeOf = (v: unknown): string => (v === null ? 'null' : Array.isArray(v) ? 'array' : typeof v);

function hasType(value: unknown, type: string): boolean {
  if (type === 'integer') return typeof value === 'number' && Number.isInteger(value);
  if (type === 'number') return typeof value === 'number' && Number.isFinite(value);
  return typeOf(value) === type;
}

/** Deep equality of JSON values (Validation §6.1.2–3: const and enum compare by JSON equality). */
function jsonEqual(a: unknown, b: unknown): boolean {
  if (a === b) return true;
  if (typeOf(a) !== typeOf(b) || typeof a !== 'object' || a === null) return false;
  if (Array.isArray(a)) return a.length === (b as unknown[]).length && a.every((x, i) => jsonEqual(x, (b as unknown[])[i]));
  const ka = Object.keys(a);
  const kb = Object.keys(b as object);
  return ka.length === kb.length && ka.every((k) => jsonEqual((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k]));
}

/** The issues of `value` against `schema`; an empty list means it is valid. Throws on a keyword it does not know. */
export function validateJson(schema: Schema, value: unknown, resolve: RefResolver = noRefs, path = ''): SchemaIssue[] {
  if (schema === true) return [];
  if (schema === false) return [{ path, message: 'no value is allowed here' }];
  const unknown = Object.keys(schema).filter((k) => !annotations.has(k) && !assertions.has(k));
  if (unknown.length > 0) throw new Error(`the validator does not know ${unknown.join(', ')}`);
  const issues: SchemaIssue[] = [];
  const fail = (message: string, at = path) => issues.push({ path: at, message });
  const s = schema as Record<string, unknown>;

  if (s.$ref !== undefined) issues.push(...validateJson(resolve(s.$ref as string), value, resolve, path));
  if (s.type !== undefined) {
    const types = Array.isArray(s.type) ? (s.type as string[]) : [s.type as string];
    if (!types.some((t) => hasType(value, t))) fail(`expected ${types.join(' or ')}, got ${typeOf(value)}`);
  }
  if ('const' in s && !jsonEqual(value, s.const)) fail(`expected ${JSON.stringify(s.const)}`);
  if (s.enum !== undefined && !(s.enum as unknown[]).some((e) => jsonEqual(value, e))) fail(`expected one of ${JSON.stringify(s.enum)}`);

  if (typeof value === 'number') {
    if (typeof s.minimum === 'number' && value < s.minimum) fail(`below the minimum ${s.minimum}`);
    if (typeof s.maximum === 'number' && value > s.maximum) fail(`above the maximum ${s.maximum}`);
    if (typeof s.exclusiveMinimum === 'number' && value <= s.exclusiveMinimum) fail(`not above ${s.exclusiveMinimum}`);
    if (typeof s.exclusiveMaximum === 'number' && value >= s.exclusiveMaximum) fail(`not below ${s.exclusiveMaximum}`);
  }
  if (typeof value === 'string') {
    // Lengths count code points (Validation §6.3.1), not UTF-16 units.
    const length = [...value].length;
    if (typeof s.minLength === 'number' && length < s.minLength) fail(`shorter than ${s.minLength}`);
    if (typeof s.maxLength === 'number' && length > s.maxLength) fail(`longer than ${s.maxLength}`);
    // Patterns are ECMA-262 regular expressions (Validation §6.3.3), here as zod wrote them, without the u flag.
    if (typeof s.pattern === 'string' && !new RegExp(s.pattern).test(value)) fail(`does not match ${s.pattern}`);
  }
  if (Array.isArray(value)) issues.push(...arrayIssues(s, value, resolve, path));
  if (typeOf(value) === 'object') issues.push(...objectIssues(s, value as Record<string, unknown>, resolve, path));

  if (s.allOf !== undefined) for (const sub of s.allOf as Schema[]) issues.push(...validateJson(sub, value, resolve, path));
  if (s.anyOf !== undefined && !(s.anyOf as Schema[]).some((sub) => validateJson(sub, value, resolve, path).length === 0)) fail('matches none of anyOf');
  if (s.oneOf !== undefined && (s.oneOf as Schema[]).filter((sub) => validateJson(sub, value, resolve, path).length === 0).length !== 1) fail('does not match exactly one of oneOf');
  if (s.not !== undefined && validateJson(s.not as Schema, value, resolve, path).length === 0) fail('matches the schema under not');
  return issues;
}

function arrayIssues(s: Record<string, unknown>, value: unknown[], resolve: RefResolver, path: string): SchemaIssue[] {
  const issues: SchemaIssue[] = [];
  if (typeof s.minItems === 'number' && value.length < s.minItems) issues.push({ path, message: `fewer than ${s.minItems} items` });
  if (typeof s.maxItems === 'number' && value.length > s.maxItems) issues.push({ path, message: `more than ${s.maxItems} items` });
  const prefix = (s.prefixItems as Schema[] | undefined) ?? [];
  value.forEach((item, i) => {
    // Core §10.3.1.2: items applies only to the elements after those prefixItems covers.
    const sub = i < prefix.length ? prefix[i] : (s.items as Schema | undefined);
    if (sub !== undefined) issues.push(...validateJson(sub, item, resolve, `${path}/${i}`));
  });
  return issues;
}

function objectIssues(s: Record<string, unknown>, value: Record<string, unknown>, resolve: RefResolver, path: string): SchemaIssue[] {
  const issues: SchemaIssue[] = [];
  const properties = (s.properties as Record<string, Schema> | undefined) ?? {};
  for (const name of (s.required as string[] | undefined) ?? []) {
    if (!(name in value)) issues.push({ path: `${path}/${name}`, message: 'required' });
  }
  for (const [name, item] of Object.entries(value)) {
    if (name in properties) issues.push(...validateJson(properties[name], item, resolve, `${path}/${name}`));
    // Core §10.3.2.3: additionalProperties judges only the names properties does not list.
    else if (s.additionalProperties !== undefined) issues.push(...validateJson(s.additionalProperties as Schema, item, resolve, `${path}/${name}`));
    if (s.propertyNames !== undefined) issues.push(...validateJson(s.propertyNames as Schema, name, resolve, `${path}/${name}`));
  }
  return issues;
}

function noRefs(ref: string): Schema {
  throw new Error(`no resolver for $ref ${ref}`);
}

/** A resolver for "#/…" JSON Pointers (RFC 6901) into `root`, and for absolute URLs from `external`. */
export function refResolver(root: unknown, external: Record<string, Schema> = {}): RefResolver {
  return (ref) => {
    if (ref in external) return external[ref];
    if (!ref.startsWith('#/')) throw new Error(`cannot resolve $ref ${ref}`);
    let node: unknown = root;
    for (const token of ref.slice(2).split('/')) {
      const key = token.replace(/~1/g, '/').replace(/~0/g, '~');
      node = (node as Record<string, unknown> | undefined)?.[key];
      if (node === undefined) throw new Error(`$ref ${ref} points nowhere`);
    }
    return node as Schema;
  };
}
