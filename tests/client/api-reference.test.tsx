import { cleanup, fireEvent, render, screen, within } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import { openApiDocumentResponse } from '../../server/contracts';
import { openApiDocument } from '../../server/http/description/openapi';
import { ApiReference, groupByTag } from '../../src/features/api-reference/components/api-reference';
import { constraints, SchemaView } from '../../src/features/api-reference/components/schema-view';

afterEach(cleanup);

// The document the server serves, parsed by the contract the page's fetcher uses.
const doc = openApiDocumentResponse.parse(
  openApiDocument({ serverUrl: 'http://studio.example', version: '1.0.0', codebookSchemaUrl: 'http://studio.example/api/schemas/codebook.schema.json' }),
);

describe('the API reference page', () => {
  it('lists every operation once, grouped under its tag in the document’s order', () => {
    const groups = groupByTag(doc);
    expect(groups.map((g) => g.tag)).toEqual(doc.tags.map((t) => t.name));
    const listed = groups.flatMap((g) => g.entries.map((e) => `${e.method} ${e.path}`));
    const documented = Object.entries(doc.paths).flatMap(([p, ops]) => Object.keys(ops).map((m) => `${m} ${p}`));
    expect(listed.sort()).toEqual(documented.sort());
  });

  it('opens a route onto who may call it, its parameters, body and responses', () => {
    render(<ApiReference doc={doc} />);
    const runs = screen.getByRole('region', { name: 'Runs' });
    const create = within(runs)
      .getAllByTestId('api-operation')
      .find((el) => el.querySelector('summary')!.textContent!.startsWith('post/api/teams/{teamId}/runs') && el.textContent!.includes('Start a training run'))!;
    fireEvent.click(create.querySelector('summary')!);
    expect(create).toHaveProperty('open', true);
    expect(within(create).getByText(/Engineers and admins/, { selector: 'p' }).textContent).toContain('roles: admin, engineer');
    expect(within(create).getByText('teamId')).toBeTruthy();
    expect(within(create).getByText('Request body')).toBeTruthy();
    // createRunBody's fields, with their required marks.
    const name = within(create).getAllByText('name', { selector: 'code' })[0].closest('li')!;
    expect(name.textContent).toContain('required');
    expect(within(create).getByText('201')).toBeTruthy();
    expect(within(create).getByText('403')).toBeTruthy();
  });

  it('filters routes by path, method or summary', () => {
    render(<ApiReference doc={doc} />);
    fireEvent.change(screen.getByLabelText('Filter routes'), { target: { value: 'reconstruction' } });
    const shown = screen.getAllByTestId('api-operation');
    // The reconstruction and its steps (tree levels, residual stages): every route whose path names it, and no other.
    expect(shown).toHaveLength(2);
    for (const op of shown) expect(op.textContent).toContain('/reconstruction/{imageId}');
    fireEvent.change(screen.getByLabelText('Filter routes'), { target: { value: 'reconstruction/{imageId}/steps' } });
    expect(screen.getAllByTestId('api-operation')).toHaveLength(1);
    fireEvent.change(screen.getByLabelText('Filter routes'), { target: { value: 'no such route' } });
    expect(screen.queryAllByTestId('api-operation')).toHaveLength(0);
  });

  it('renders a schema’s types and limits readably', () => {
    expect(constraints({ type: 'string', minLength: 1, maxLength: 200 })).toEqual(['1–200 characters']);
    expect(constraints({ type: 'integer', minimum: 0, maximum: 14, default: 3 })).toEqual(['≥ 0', '≤ 14', 'default 3']);
    render(<SchemaView schema={{ type: 'object', properties: { role: { type: 'string', enum: ['admin', 'viewer'] }, note: { anyOf: [{ type: 'string' }, { type: 'null' }] } }, required: ['role'], additionalProperties: false }} />);
    expect(screen.getByText('"admin" | "viewer"')).toBeTruthy();
    expect(screen.getByText('note').closest('li')!.textContent).toBe('notestring | nulloptional');
    expect(screen.getByText('No other fields.')).toBeTruthy();
  });
});

describe('a field of several shapes', () => {
  it('lists the fields of its object alternative', () => {
    render(<SchemaView schema={{ type: 'object', properties: { bits: { anyOf: [{ type: 'integer' }, { type: 'object', properties: { from: { type: 'integer' } }, required: ['from'] }] } }, required: ['bits'] }} />);
    expect(screen.getByText('bits').closest('li')!.textContent).toContain('integer | objectrequired');
    expect(screen.getByText('as an object:')).toBeTruthy();
    expect(screen.getByText('from').closest('li')!.textContent).toBe('fromintegerrequired');
  });
});
