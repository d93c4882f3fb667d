import { describe, expect, it } from 'vitest';
import { checkedInput } from '../../../server/jobs/runner';
import type { Job } from '../../../server/jobs/queue';

const hash = 'a'.repeat(64);
const job = (over: Partial<Job>): Job => ({ id: 7, teamId: 1, runId: null, codebookId: null, kind: 'evaluate', payload: null, ...over }) as Job;

describe('checkedInput', () => {
  it('passes a run evaluation and a codebook evaluation with its image list', () => {
    expect(checkedInput(job({ runId: 3 }))).toEqual({ runId: 3, codebookId: null, payload: null });
    const payload = { heldOutImageIds: [4, 5], heldOutHash: hash };
    expect(checkedInput(job({ codebookId: 9, payload }))).toEqual({ runId: null, codebookId: 9, payload });
  });

  it('refuses an evaluate payload whose image ids are not ids, naming the field', () => {
    expect(() => checkedInput(job({ codebookId: 9, payload: { heldOutImageIds: ['4'], heldOutHash: hash } }))).toThrow(/evaluate job's input is malformed.*heldOutImageIds/);
  });

  it('refuses a train job without a run', () => {
    expect(() => checkedInput(job({ kind: 'train' }))).toThrow(/train job's input is malformed.*runId/);
  });
});
