import { useState, type FormEvent } from 'react';
import { proposeReleaseBody, type ReleaseDetail } from '../../../../server/contracts';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { messageOf } from '../../../lib/api-client';
import { useProposeRelease } from '../api/review-release';

/** Proposes a codebook for release, or proposes it again after a return (the earlier name and version filled in). */
export function ProposeForm({ teamId, codebookId, previous, onProposed }: { teamId: number; codebookId: number; previous?: ReleaseDetail | null; onProposed?: (r: ReleaseDetail) => void }) {
  const propose = useProposeRelease(teamId, codebookId);
  const [name, setName] = useState(previous?.name ?? '');
  const [version, setVersion] = useState(previous?.version ?? '');
  const [note, setNote] = useState('');
  const [errors, setErrors] = useState<Record<string, string>>({});

  function submit(event: FormEvent) {
    event.preventDefault();
    // The contract the server checks with, so the form names the same problems before sending.
    const parsed = proposeReleaseBody.safeParse({ name, version, note });
    if (!parsed.success) {
      setErrors(Object.fromEntries(parsed.error.issues.map((i) => [String(i.path[0]), i.message])));
      return;
    }
    setErrors({});
    propose.mutate(parsed.data, { onSuccess: (r) => onProposed?.(r) });
  }

  return (
    <form onSubmit={submit} className="flex flex-col gap-3" aria-label="Propose for release" noValidate>
      <div className="grid gap-3 sm:grid-cols-2">
        <TextField label="Release name" value={name} onChange={(e) => setName(e.target.value)} error={errors.name} hint="Lower-case words joined by -, _ or . (edge-cam-luma)" />
        <TextField label="Version" value={version} onChange={(e) => setVersion(e.target.value)} error={errors.version} hint="A whole number or MAJOR.MINOR.PATCH" />
      </div>
      <label className="flex flex-col gap-1.5 text-sm font-medium text-ink-800">
        Note for the reviewer
        <textarea
          className="min-h-20 rounded-md border border-ink-300 bg-surface px-3 py-2 text-base font-normal text-ink-900"
          value={note}
          onChange={(e) => setNote(e.target.value)}
          aria-invalid={errors.note ? true : undefined}
        />
        {errors.note && <span className="text-sm font-normal text-danger-700">{errors.note}</span>}
      </label>
      {propose.isError && <Alert tone="error">{messageOf(propose.error)}</Alert>}
      <div>
        <Button type="submit" pending={propose.isPending}>
          {previous ? 'Propose again' : 'Propose for release'}
        </Button>
      </div>
    </form>
  );
}
