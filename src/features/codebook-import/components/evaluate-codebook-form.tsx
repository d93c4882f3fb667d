import { useState } from 'react';
import { Link } from 'react-router-dom';
import { href } from '../../../config/routes';
import { messageOf } from '../../../lib/api-client';
import { plural } from '../../../lib/format';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { SelectField } from '../../../components/ui/field';
import { useEvaluateCodebook } from '../api/evaluate-codebook';
import { useImageSets, useSetImages } from '../../../lib/queries/image-sets';

/** Measures a freshly imported codebook on the held-out images of one of the team's sets. */
export function EvaluateCodebookForm({ teamId, codebookId, onQueued }: { teamId: number; codebookId: number; onQueued?: () => void }) {
  // Refetched on mount so new uploads show up; only held-out images, since a codebook is measured on those.
  const sets = useImageSets(teamId, { fresh: true });
  const [setId, setSetId] = useState<number | null>(null);
  const images = useSetImages(teamId, setId, { role: 'held-out', fresh: true });
  const evaluate = useEvaluateCodebook(teamId, codebookId);
  const candidates = (sets.data ?? []).filter((set) => set.counts.heldOut > 0);
  const heldOutIds = images.data?.map((image) => image.id) ?? [];

  if (sets.isPending) return <p className="text-sm text-ink-600">Loading image sets…</p>;
  if (sets.isError) return <Alert tone="error">{messageOf(sets.error)}</Alert>;
  if (candidates.length === 0) {
    return (
      <p className="text-sm text-ink-600">
        No set of this team has held-out images yet.{' '}
        <Link to={href.teamImageSets(teamId)} className="font-medium text-ember-700 hover:underline">
          Mark some held-out
        </Link>{' '}
        to measure this codebook.
      </p>
    );
  }

  return (
    <form
      aria-label="Evaluate on a held-out set"
      noValidate
      onSubmit={(event) => {
        event.preventDefault();
        if (heldOutIds.length > 0) evaluate.mutate({ heldOutImageIds: heldOutIds }, { onSuccess: onQueued });
      }}
      className="flex flex-col gap-3"
    >
      <div className="flex flex-wrap items-end gap-3">
        <SelectField
          label="Held-out images of"
          value={setId ?? ''}
          onChange={(event) => {
            setSetId(event.target.value === '' ? null : Number(event.target.value));
            evaluate.reset();
          }}
          containerClassName="min-w-72"
        >
          <option value="">Choose a set…</option>
          {candidates.map((set) => (
            <option key={set.id} value={set.id}>
              {`${set.name} — ${plural(set.counts.heldOut, 'held-out image')}`}
            </option>
          ))}
        </SelectField>
        <Button type="submit" variant="secondary" disabled={heldOutIds.length === 0 || evaluate.isSuccess} pending={evaluate.isPending || (setId !== null && images.isPending)}>
          Evaluate
        </Button>
      </div>
      {images.isError && <Alert tone="error">{messageOf(images.error)}</Alert>}
      {evaluate.isError && <Alert tone="error">{messageOf(evaluate.error)}</Alert>}
      {evaluate.isSuccess && (
        <Alert tone="success">
          Evaluation queued on {plural(evaluate.data.imageCount, 'held-out image')};{' '}
          <Link to={href.teamEvaluation(teamId, evaluate.data.id)} className="font-medium underline">
            follow its progress
          </Link>
          . Its rate and distortion appear on{' '}
          <Link to={href.teamCodebook(teamId, codebookId)} className="font-medium underline">
            the codebook's page
          </Link>{' '}
          when the job is done.
        </Alert>
      )}
    </form>
  );
}
