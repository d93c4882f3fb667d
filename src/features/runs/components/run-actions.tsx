import { useState } from 'react';
import { messageOf } from '../../../lib/api-client';
import { Button } from '../../../components/ui/button';
import { ConfirmDialog } from '../../../components/ui/confirm-dialog';
import { TextField } from '../../../components/ui/field';
import { useDeleteRun } from '../api/delete-run';
import { useRenameRun } from '../api/rename-run';

// Same bound as the contract's run name.
const NAME_MAX = 120;

/** Rename (engineers and admins) and delete behind a confirmation (admins) on the run page. */
export function RunActions({
  teamId,
  runId,
  name,
  codebookCount,
  canRename,
  canDelete,
  onDeleted,
  onChanged,
}: {
  teamId: number;
  runId: number;
  name: string;
  codebookCount: number;
  canRename: boolean;
  canDelete: boolean;
  onDeleted: () => void;
  /** After a rename or a delete: other features' lists that name the run. */
  onChanged: () => void;
}) {
  const [renaming, setRenaming] = useState(false);
  const [draft, setDraft] = useState(name);
  const [deleting, setDeleting] = useState(false);
  const rename = useRenameRun(teamId, runId);
  const remove = useDeleteRun(teamId, runId);
  const trimmed = draft.trim();
  const draftError = trimmed.length === 0 ? 'Give the run a name' : trimmed.length > NAME_MAX ? `At most ${NAME_MAX} characters` : undefined;

  return (
    <>
      {canRename && (
        <Button
          variant="secondary"
          onClick={() => {
            setDraft(name);
            rename.reset();
            setRenaming(true);
          }}
        >
          Rename
        </Button>
      )}
      {canDelete && (
        <Button variant="secondary" onClick={() => setDeleting(true)}>
          Delete run
        </Button>
      )}
      <ConfirmDialog
        open={renaming}
        title="Rename this run"
        confirmLabel="Save name"
        tone="primary"
        pending={rename.isPending}
        error={rename.isError ? messageOf(rename.error) : draftError && draft !== name ? draftError : null}
        onCancel={() => setRenaming(false)}
        onConfirm={() => {
          if (draftError) return;
          rename.mutate(trimmed, {
            onSuccess: () => {
              setRenaming(false);
              onChanged();
            },
          });
        }}
      >
        <TextField label="Run name" autoComplete="off" value={draft} maxLength={NAME_MAX} onChange={(e) => setDraft(e.target.value)} />
      </ConfirmDialog>
      <ConfirmDialog
        open={deleting}
        title="Delete this run?"
        confirmLabel="Delete run"
        pending={remove.isPending}
        error={remove.isError ? messageOf(remove.error) : null}
        onCancel={() => {
          setDeleting(false);
          remove.reset();
        }}
        onConfirm={() =>
          remove.mutate(undefined, {
            onSuccess: () => {
              onChanged();
              onDeleted();
            },
          })
        }
      >
        <p>
          <span className="font-medium text-ink-950">{name}</span> is deleted with its {codebookCount === 1 ? '1 codebook' : `${codebookCount} codebooks`}, their
          evaluations and reconstructions. Its images stay in their sets; a codebook imported from an export of this run stays too.
        </p>
      </ConfirmDialog>
    </>
  );
}

