import { useState } from 'react';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { messageOf } from '../../../lib/api-client';
import { useReviewRelease } from '../api/review-release';

/** Approve (comment optional) or send back (comment required) a proposal; shown to engineers and admins who did not propose it. */
export function ReviewForm({ teamId, releaseId }: { teamId: number; releaseId: number }) {
  const review = useReviewRelease(teamId, releaseId);
  const [comment, setComment] = useState('');
  const [missing, setMissing] = useState(false);

  return (
    <form className="flex flex-col gap-3" aria-label="Review" onSubmit={(e) => e.preventDefault()}>
      <label className="flex flex-col gap-1.5 text-sm font-medium text-ink-800">
        Comment
        <textarea
          className="min-h-20 rounded-md border border-ink-300 bg-surface px-3 py-2 text-base font-normal text-ink-900"
          value={comment}
          onChange={(e) => setComment(e.target.value)}
          aria-invalid={missing || undefined}
        />
        {missing && <span className="text-sm font-normal text-danger-700">Say what should change before sending it back</span>}
      </label>
      {review.isError && <Alert tone="error">{messageOf(review.error)}</Alert>}
      <div className="flex flex-wrap gap-2">
        <Button pending={review.isPending && review.variables?.decision === 'approve'} onClick={() => review.mutate({ decision: 'approve', comment: comment.trim() || undefined })}>
          Approve and release
        </Button>
        <Button
          variant="secondary"
          pending={review.isPending && review.variables?.decision === 'return'}
          onClick={() => {
            setMissing(!comment.trim());
            if (comment.trim()) review.mutate({ decision: 'return', comment: comment.trim() });
          }}
        >
          Send back
        </Button>
      </div>
    </form>
  );
}
