import { useState } from 'react';
import { EVALUATION_BATCH_LIMITS, type CodebookSummary, type EvaluationBatch, type ImageSet } from '../../../../server/contracts';
import { messageOf } from '../../../lib/api-client';
import { plural } from '../../../lib/format';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { useCreateBatch } from '../api/create-batch';

function toggle(list: readonly number[], id: number): number[] {
  return list.includes(id) ? list.filter((x) => x !== id) : [...list, id];
}

function CheckList<T extends { id: number }>({ legend, items, chosen, label, onChange }: { legend: string; items: readonly T[]; chosen: readonly number[]; label: (item: T) => string; onChange: (ids: number[]) => void }) {
  return (
    <fieldset className="flex min-w-0 flex-col gap-1.5">
      <legend className="mb-1 text-sm font-medium text-ink-800">{legend}</legend>
      <div className="max-h-64 overflow-y-auto rounded-md border border-ink-200 px-3 py-2">
        {items.map((item) => (
          <label key={item.id} className="flex items-center gap-2 py-0.5 text-sm text-ink-800">
            <input type="checkbox" checked={chosen.includes(item.id)} onChange={() => onChange(toggle(chosen, item.id))} />
            {label(item)}
          </label>
        ))}
      </div>
    </fieldset>
  );
}

/** Several codebooks × several image sets, queued as one evaluation job; every image of a chosen set is held out. */
export function BatchForm({ teamId, codebooks, sets, onCreated }: { teamId: number; codebooks: readonly CodebookSummary[]; sets: readonly ImageSet[]; onCreated: (batch: EvaluationBatch) => void }) {
  const [codebookIds, setCodebookIds] = useState<number[]>([]);
  const [imageSetIds, setImageSetIds] = useState<number[]>([]);
  const create = useCreateBatch(teamId);
  const tooMany = codebookIds.length > EVALUATION_BATCH_LIMITS.codebooks || imageSetIds.length > EVALUATION_BATCH_LIMITS.sets;
  const ready = codebookIds.length > 0 && imageSetIds.length > 0 && !tooMany;

  return (
    <form
      aria-label="New evaluation batch"
      className="flex flex-col gap-4"
      onSubmit={(event) => {
        event.preventDefault();
        if (ready) create.mutate({ codebookIds, imageSetIds }, { onSuccess: onCreated });
      }}
    >
      <div className="grid gap-4 md:grid-cols-2">
        <CheckList legend="Codebooks" items={codebooks} chosen={codebookIds} onChange={setCodebookIds} label={(c) => `${c.name} — K = ${c.size}, ${c.patch.width}×${c.patch.height} ${c.color}`} />
        <CheckList legend="Held-out image sets" items={sets} chosen={imageSetIds} onChange={setImageSetIds} label={(s) => `${s.name} — ${plural(s.counts.total, 'image')}`} />
      </div>
      {tooMany && (
        <Alert tone="error">
          At most {EVALUATION_BATCH_LIMITS.codebooks} codebooks and {EVALUATION_BATCH_LIMITS.sets} sets in one batch.
        </Alert>
      )}
      {create.isError && (
        <Alert tone="error" title="The evaluation was not queued">
          {messageOf(create.error)}
        </Alert>
      )}
      <div>
        <Button type="submit" disabled={!ready} pending={create.isPending}>
          {ready ? `Evaluate ${plural(codebookIds.length, 'codebook')} on ${plural(imageSetIds.length, 'set')}` : 'Choose codebooks and sets'}
        </Button>
      </div>
    </form>
  );
}
