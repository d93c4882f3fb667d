import type { ReactNode } from 'react';

/** A JSON Schema (draft 2020-12) as the API description carries it. */
export type JsonSchema = Record<string, unknown>;

const asSchema = (value: unknown): JsonSchema | undefined => (value && typeof value === 'object' && !Array.isArray(value) ? (value as JsonSchema) : undefined);
const literal = (value: unknown) => JSON.stringify(value);

/** The name a $ref gives: the last segment of a local pointer, or the file name of a schema served elsewhere. */
function refName(ref: string): string {
  return ref.split('/').at(-1)!.replace(/\.schema\.json$/, ' document');
}

/** Objects and arrays of objects get a nested property list; everything else fits on one line. */
function nestedObject(schema: JsonSchema): JsonSchema | undefined {
  if (schema.type === 'object' && asSchema(schema.properties)) return schema;
  if (schema.type === 'array') return nestedObject(asSchema(schema.items) ?? {});
  const variants = Array.isArray(schema.anyOf) ? (schema.anyOf as JsonSchema[]).filter((s) => s.type !== 'null') : [];
  return variants.length === 1 ? nestedObject(variants[0]) : undefined;
}

/** The object alternatives of an anyOf that has other alternatives too ("integer | object"), each to be listed. */
function objectVariants(schema: JsonSchema): JsonSchema[] {
  if (!Array.isArray(schema.anyOf)) return [];
  return (schema.anyOf as JsonSchema[]).map((s) => nestedObject(s)).filter((s): s is JsonSchema => s !== undefined);
}

/** A one-line description of a schema's type: "integer", "array of string", "\"a\" | \"b\"", "number | null". */
export function typeLabel(schema: JsonSchema): ReactNode {
  if (typeof schema.$ref === 'string') {
    const ref = schema.$ref;
    return ref.startsWith('#') ? refName(ref) : <a className="text-ember-700 underline" href={ref}>{refName(ref)}</a>;
  }
  if ('const' in schema) return literal(schema.const);
  if (Array.isArray(schema.enum)) return schema.enum.map(literal).join(' | ');
  if (Array.isArray(schema.anyOf)) {
    return (schema.anyOf as JsonSchema[]).map((s, i) => (
      <span key={i}>
        {i > 0 && ' | '}
        {typeLabel(s)}
      </span>
    ));
  }
  if (schema.type === 'array') {
    if (Array.isArray(schema.prefixItems)) return <>[{(schema.prefixItems as JsonSchema[]).map((s, i) => <span key={i}>{i > 0 && ', '}{typeLabel(s)}</span>)}]</>;
    const items = asSchema(schema.items);
    return <>array of {items ? typeLabel(items) : 'anything'}</>;
  }
  if (schema.type === 'object' && !asSchema(schema.properties)) {
    const values = asSchema(schema.additionalProperties);
    return values && Object.keys(values).length > 0 ? <>map of {typeLabel(values)}</> : 'object';
  }
  if (typeof schema.type === 'string') return schema.type;
  if (Array.isArray(schema.type)) return schema.type.join(' | ');
  return 'any JSON value';
}

const bounds: Array<[string, string]> = [
  ['minimum', '≥'],
  ['exclusiveMinimum', '>'],
  ['maximum', '≤'],
  ['exclusiveMaximum', '<'],
];

/** The limits a schema sets, as short phrases ("1–200 characters", "≥ 0", "pattern ^[a-z]+$", "default 1"). */
export function constraints(schema: JsonSchema): string[] {
  const out: string[] = [];
  for (const [key, sign] of bounds) if (typeof schema[key] === 'number') out.push(`${sign} ${String(schema[key])}`);
  const range = (min: unknown, max: unknown, unit: string) => {
    if (typeof min === 'number' && typeof max === 'number') out.push(`${min}–${max} ${unit}`);
    else if (typeof min === 'number') out.push(`at least ${min} ${unit}`);
    else if (typeof max === 'number') out.push(`at most ${max} ${unit}`);
  };
  range(schema.minLength, schema.maxLength, 'characters');
  range(schema.minItems, schema.maxItems, 'items');
  if (typeof schema.pattern === 'string') out.push(`pattern ${schema.pattern}`);
  if (typeof schema.format === 'string') out.push(`format ${schema.format}`);
  if ('default' in schema) out.push(`default ${literal(schema.default)}`);
  return out;
}

function PropertyRow({ name, schema, required, depth }: { name: string; schema: JsonSchema; required: boolean; depth: number }) {
  const nested = nestedObject(schema);
  const limits = constraints(schema);
  return (
    <li className="py-1.5">
      <div className="flex flex-wrap items-baseline gap-x-2 gap-y-0.5 text-sm">
        <code className="font-mono font-medium text-ink-900">{name}</code>
        <span className="font-mono text-xs text-ink-700">{typeLabel(schema)}</span>
        <span className={required ? 'text-xs font-medium text-ember-700' : 'text-xs text-ink-500'}>{required ? 'required' : 'optional'}</span>
        {limits.length > 0 && <span className="text-xs text-ink-500">{limits.join(' · ')}</span>}
      </div>
      {typeof schema.description === 'string' && <p className="text-xs text-ink-600">{schema.description}</p>}
      {nested && depth < 6 && <ObjectProperties schema={nested} depth={depth + 1} />}
      {!nested && depth < 6 && objectVariants(schema).map((variant, i) => (
        <div key={i} className="mt-1">
          <p className="text-xs text-ink-500">as an object:</p>
          <ObjectProperties schema={variant} depth={depth + 1} />
        </div>
      ))}
    </li>
  );
}

function ObjectProperties({ schema, depth }: { schema: JsonSchema; depth: number }) {
  const properties = Object.entries(asSchema(schema.properties) ?? {});
  const required = new Set(Array.isArray(schema.required) ? (schema.required as string[]) : []);
  if (properties.length === 0) return <p className="text-sm text-ink-600">An empty object.</p>;
  return (
    <ul className={depth > 0 ? 'mt-1 border-l border-ink-200 pl-3' : ''}>
      {properties.map(([name, sub]) => (
        <PropertyRow key={name} name={name} schema={asSchema(sub) ?? {}} required={required.has(name)} depth={depth} />
      ))}
      {schema.additionalProperties === false && depth === 0 && <li className="pt-1 text-xs text-ink-500">No other fields.</li>}
    </ul>
  );
}

/** A schema rendered readably: an object's fields as a nested list, anything else as its type and limits. */
export function SchemaView({ schema }: { schema: JsonSchema }) {
  const nested = nestedObject(schema);
  if (nested && nested === schema) return <ObjectProperties schema={schema} depth={0} />;
  const limits = constraints(schema);
  return (
    <div>
      <p className="font-mono text-sm text-ink-800">
        {typeLabel(schema)}
        {limits.length > 0 && <span className="ml-2 font-sans text-xs text-ink-500">{limits.join(' · ')}</span>}
      </p>
      {nested && <ObjectProperties schema={nested} depth={1} />}
    </div>
  );
}
