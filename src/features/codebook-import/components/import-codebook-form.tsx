import { useId, useRef, useState } from 'react';
import { Link } from 'react-router-dom';
import type { CodebookDetail } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { isApiError, messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useImportCodebook } from '../api/import-codebook';
import { readCodebookText, type LocalCheck } from '../read-codebook';

type FieldProblem = { path: string; message: string };

/** The server's `validation_failed` details: [{path, message}], one per field at fault. */
function fieldProblems(error: unknown): FieldProblem[] {
  if (!isApiError(error) || !Array.isArray(error.details)) return [];
  return error.details.flatMap((d: unknown) => {
    const { path, message } = (d ?? {}) as { path?: unknown; message?: unknown };
    return typeof path === 'string' && typeof message === 'string' ? [{ path, message }] : [];
  });
}

/**
 * Imports a codebook document from a file or pasted text. The text is parsed and its outline checked here, so an
 * obviously wrong file is named at once; schema and checksum are decided by the server, which names the field.
 */
export function ImportCodebookForm({ teamId, onImported }: { teamId: number; onImported: (codebook: CodebookDetail) => void }) {
  const importer = useImportCodebook(teamId);
  const fileInput = useRef<HTMLInputElement>(null);
  const [text, setText] = useState('');
  const [fileName, setFileName] = useState<string | null>(null);
  const [name, setName] = useState('');
  const [check, setCheck] = useState<LocalCheck | null>(null);
  const pasteId = useId();
  const problems = fieldProblems(importer.error);

  const take = (value: string, from: string | null) => {
    setText(value);
    setFileName(from);
    setCheck(value.trim() ? readCodebookText(value) : null);
    importer.reset();
  };

  const submit = () => {
    const result = readCodebookText(text);
    setCheck(result);
    if (!result.ok) return;
    importer.mutate({ document: result.document, name: name.trim() || undefined }, { onSuccess: onImported });
  };

  return (
    <form
      aria-label="Import codebook"
      noValidate
      onSubmit={(event) => {
        event.preventDefault();
        submit();
      }}
      className="flex flex-col gap-4"
    >
      <div className="flex flex-wrap items-center gap-3">
        <Button variant="secondary" onClick={() => fileInput.current?.click()}>
          Choose a .json file…
        </Button>
        <input
          ref={fileInput}
          type="file"
          accept=".json,application/json"
          className="sr-only"
          tabIndex={-1}
          aria-label="Codebook file"
          onChange={async (event) => {
            const file = event.target.files?.[0];
            event.target.value = '';
            if (file) take(await file.text(), file.name);
          }}
        />
        <span className="text-sm text-ink-600">{fileName ? <span className="font-medium text-ink-900">{fileName}</span> : 'or paste the document below'}</span>
      </div>

      <div className="flex flex-col gap-1.5">
        <label htmlFor={pasteId} className="text-sm font-medium text-ink-800">
          Codebook document (JSON)
        </label>
        <textarea
          id={pasteId}
          value={text}
          onChange={(event) => take(event.target.value, null)}
          rows={8}
          spellCheck={false}
          placeholder='{ "format": "cellwright-codebook", "version": 2, … }'
          aria-invalid={check && !check.ok ? true : undefined}
          className="num block w-full rounded-md border border-ink-300 bg-surface px-3 py-2 text-sm text-ink-900 hover:border-ink-400"
        />
        {check?.ok && (
          <p className="num text-sm text-ink-700" role="status">
            {check.outline}
          </p>
        )}
        {check && !check.ok && (
          <p className="text-sm text-danger-700" role="alert">
            {check.message}
          </p>
        )}
      </div>

      <TextField
        label="Name in this team (optional)"
        hint="Without one, the codebook is named after what it was trained on."
        value={name}
        onChange={(event) => setName(event.target.value)}
        maxLength={200}
        containerClassName="max-w-md"
      />

      {importer.isError && (
        <Alert tone="error" title="The codebook was not imported">
          {problems.length === 0 && <p>{messageOf(importer.error)}</p>}
          {problems.length > 0 && (
            <ul aria-label="Fields at fault" className="mt-1.5 flex flex-col gap-0.5">
              {problems.map((problem) => (
                <li key={`${problem.path}-${problem.message}`}>
                  <code className="num rounded-sm bg-white/70 px-1 text-ink-950">{problem.path}</code> {problem.message}
                </li>
              ))}
            </ul>
          )}
        </Alert>
      )}

      <div>
        <Button type="submit" pending={importer.isPending} disabled={!text.trim()}>
          Import codebook
        </Button>
      </div>
    </form>
  );
}

export function ImportedNotice({ teamId, codebook }: { teamId: number; codebook: CodebookDetail }) {
  return (
    <Alert tone="success" title={`Imported “${codebook.name}”`}>
      <p className="num">
        {codebook.size} codewords of {codebook.patch.width}×{codebook.patch.height} {codebook.color}, {codebook.meanBits > 0 ? `${codebook.meanBits} mean bits` : 'no mean removal'};
        checksum {codebook.checksum.slice(0, 12)}…
      </p>
      <p className="mt-1">
        <Link to={href.teamCodebook(teamId, codebook.id)} className="font-medium text-ember-700 underline">
          Open the codebook
        </Link>
      </p>
    </Alert>
  );
}
