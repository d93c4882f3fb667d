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

  it('passes a batch of codebooks on image lists, with or without its one codebook named', () => {
    const payload = { codebookIds: [9, 10], sets: [{ setId: 2, name: 'reef', imageIds: [4, 5], heldOutHash: hash }, { setId: null, name: 'chosen images', imageIds: [6], heldOutHash: hash }] };
    expect(checkedInput(job({ payload }))).toEqual({ runId: null, codebookId: null, payload });
    const one = { codebookIds: [9], sets: [payload.sets[0]] };
    expect(checkedInput(job({ codebookId: 9, payload: one }))).toEqual({ runId: null, codebookId: 9, payload: one });
  });

  it('refuses a batch without codebooks or with an empty image list', () => {
    expect(() => checkedInput(job({ payload: { codebookIds: [], sets: [{ setId: 2, name: 'reef', imageIds: [4], heldOutHash: hash }] } }))).toThrow(/evaluate job's input is malformed/);
    expect(() => checkedInput(job({ payload: { codebookIds: [9], sets: [{ setId: 2, name: 'reef', imageIds: [], heldOutHash: hash }] } }))).toThrow(/evaluate job's input is malformed/);
  });

  it('refuses a train job without a run', () => {
    expect(() => checkedInput(job({ kind: 'train' }))).toThrow(/train job's input is malformed.*runId/);
  });

  it('passes an anomaly map, an anomaly list and a denoise job of a codebook', () => {
    const map = { target: 'map', imageIds: [4], rate: 0.001, score: 'nll', limit: 0 };
    expect(checkedInput(job({ kind: 'anomaly', codebookId: 9, payload: map }))).toEqual({ runId: null, codebookId: 9, payload: map });
    const list = { target: 'list', imageIds: [4, 5, 6], rate: 0.01, score: 'distance', limit: 24 };
    expect(checkedInput(job({ kind: 'anomaly', codebookId: 9, payload: list }))).toEqual({ runId: null, codebookId: 9, payload: list });
    const denoise = { imageId: 4, sigma: 20, seed: 5, step: 1 };
    expect(checkedInput(job({ kind: 'denoise', codebookId: 9, payload: denoise }))).toEqual({ runId: null, codebookId: 9, payload: denoise });
  });

  it('refuses an anomaly job without images or with a rate out of range, and a denoise job without σ or a codebook', () => {
    expect(() => checkedInput(job({ kind: 'anomaly', codebookId: 9, payload: { target: 'map', imageIds: [], rate: 0.001, score: 'nll', limit: 0 } }))).toThrow(/anomaly job's input is malformed.*imageIds/);
    expect(() => checkedInput(job({ kind: 'anomaly', codebookId: 9, payload: { target: 'map', imageIds: [4], rate: 0.9, score: 'nll', limit: 0 } }))).toThrow(/anomaly job's input is malformed.*rate/);
    expect(() => checkedInput(job({ kind: 'denoise', codebookId: 9, payload: { imageId: 4, seed: 5, step: 1 } }))).toThrow(/denoise job's input is malformed.*sigma/);
    expect(() => checkedInput(job({ kind: 'denoise', payload: { imageId: 4, sigma: 20, seed: 5, step: 1 } }))).toThrow(/denoise job's input is malformed.*codebookId/);
  });
});
