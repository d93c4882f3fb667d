import { useMemo, useState } from 'react';
import type { OpenApiDocument, OpenApiOperation } from '../../../../server/contracts';
import { Badge } from '../../../components/ui/badge';
import { Panel } from '../../../components/ui/panel';
import { SchemaView, type JsonSchema } from './schema-view';

type Entry = { method: string; path: string; operation: OpenApiOperation };

const methodTone: Record<string, string> = {
  get: 'bg-ink-100 text-ink-800',
  post: 'bg-ember-100 text-ember-800',
  patch: 'bg-caution-50 text-caution-800',
  delete: 'bg-ink-800 text-white',
};

const accessLabels: Record<string, string> = {
  public: 'Anyone',
  'optional-session': 'Anyone (signed-in callers recognised)',
  session: 'Any signed-in user',
  member: 'Team members',
  engineer: 'Engineers and admins',
  admin: 'Admins',
  worker: 'Compute workers',
};

/** Operations grouped by their first tag, in the order the document lists its tags. */
export function groupByTag(doc: OpenApiDocument, filter = ''): Array<{ tag: string; entries: Entry[] }> {
  const needle = filter.trim().toLowerCase();
  const entries: Entry[] = Object.entries(doc.paths).flatMap(([path, ops]) =>
    Object.entries(ops).map(([method, operation]) => ({ method, path, operation: operation! })),
  );
  const matching = needle ? entries.filter((e) => `${e.method} ${e.path} ${e.operation.summary}`.toLowerCase().includes(needle)) : entries;
  return doc.tags
    .map(({ name }) => ({ tag: name, entries: matching.filter((e) => e.operation.tags[0] === name) }))
    .filter((group) => group.entries.length > 0);
}

function MediaSchemas({ content }: { content: Record<string, { schema?: JsonSchema }> }) {
  return (
    <div className="space-y-2">
      {Object.entries(content).map(([type, media]) => (
        <div key={type}>
          <p className="text-xs font-medium text-ink-600">{type}</p>
          {media.schema ? <SchemaView schema={media.schema} /> : <p className="text-sm text-ink-600">Bytes.</p>}
        </div>
      ))}
    </div>
  );
}

function Parameters({ operation }: { operation: OpenApiOperation }) {
  if (operation.parameters.length === 0) return null;
  return (
    <section>
      <h4 className="text-sm font-semibold text-ink-900">Parameters</h4>
      <ul className="mt-1 space-y-1">
        {operation.parameters.map((p) => (
          <li key={`${p.in}:${p.name}`} className="text-sm">
            <code className="font-mono font-medium text-ink-900">{p.name}</code>
            <span className="ml-2 text-xs text-ink-500">
              in {p.in}
              {p.required ? ', required' : ', optional'}
            </span>
            <div className="ml-4">
              <SchemaView schema={p.schema} />
            </div>
          </li>
        ))}
      </ul>
    </section>
  );
}

function OperationDetail({ operation }: { operation: OpenApiOperation }) {
  const roles = operation['x-cellwright-roles'];
  return (
    <div className="space-y-4 border-t border-ink-100 px-4 py-3">
      <p className="text-sm text-ink-700">
        <span className="font-medium">Who may call it:</span> {accessLabels[operation['x-cellwright-access']] ?? operation['x-cellwright-access']}
        {roles && <span className="text-ink-600"> (roles: {roles.join(', ')})</span>}
      </p>
      <Parameters operation={operation} />
      {operation.requestBody && (
        <section>
          <h4 className="text-sm font-semibold text-ink-900">Request body</h4>
          {operation.requestBody.description && <p className="text-sm text-ink-600">{operation.requestBody.description}</p>}
          <MediaSchemas content={operation.requestBody.content} />
        </section>
      )}
      <section>
        <h4 className="text-sm font-semibold text-ink-900">Responses</h4>
        <ul className="mt-1 space-y-3">
          {Object.entries(operation.responses).map(([status, response]) => (
            <li key={status}>
              <p className="text-sm">
                <code className="font-mono font-semibold text-ink-900">{status}</code> <span className="text-ink-700">{response.description}</span>
              </p>
              {response.content && !status.startsWith('4') && (
                <div className="ml-4 mt-1">
                  <MediaSchemas content={response.content} />
                </div>
              )}
            </li>
          ))}
        </ul>
      </section>
    </div>
  );
}

function OperationItem({ entry }: { entry: Entry }) {
  return (
    <details className="rounded-md border border-ink-200" data-testid="api-operation">
      <summary className="flex cursor-pointer flex-wrap items-center gap-2 px-4 py-2">
        <span className={`inline-flex h-5 w-16 items-center justify-center rounded-sm font-mono text-xs font-semibold uppercase ${methodTone[entry.method] ?? ''}`}>{entry.method}</span>
        <code className="font-mono text-sm text-ink-900">{entry.path}</code>
        <span className="text-sm text-ink-600">{entry.operation.summary}</span>
        {entry.operation['x-cellwright-roles'] && entry.operation['x-cellwright-access'] !== 'member' && <Badge>{accessLabels[entry.operation['x-cellwright-access']]}</Badge>}
      </summary>
      <OperationDetail operation={entry.operation} />
    </details>
  );
}

/** The API description, readable: the routes by tag, each opening onto its access, parameters, body and responses. */
export function ApiReference({ doc }: { doc: OpenApiDocument }) {
  const [filter, setFilter] = useState('');
  const groups = useMemo(() => groupByTag(doc, filter), [doc, filter]);
  const error = doc.components.schemas.Error;
  return (
    <div className="space-y-6">
      <Panel title="Errors" titleId="api-errors" description="Every 4xx answer, and every 5xx but the health check’s, has this one shape; clients branch on code, never on message.">
        {error && <SchemaView schema={error} />}
      </Panel>
      <label className="block text-sm text-ink-700">
        Filter routes
        <input
          type="search"
          value={filter}
          onChange={(e) => setFilter(e.target.value)}
          placeholder="path, method or summary"
          className="mt-1 block w-full max-w-md rounded-md border border-ink-300 px-3 py-1.5 text-sm"
        />
      </label>
      {groups.length === 0 && <p className="text-sm text-ink-600">No route matches “{filter}”.</p>}
      {groups.map((group) => (
        <Panel key={group.tag} title={group.tag} titleId={`api-tag-${group.tag.replace(/\W+/g, '-').toLowerCase()}`} description={`${group.entries.length} routes`}>
          <div className="space-y-2">
            {group.entries.map((entry) => (
              <OperationItem key={`${entry.method} ${entry.path}`} entry={entry} />
            ))}
          </div>
        </Panel>
      ))}
    </div>
  );
}
