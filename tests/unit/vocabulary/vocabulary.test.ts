import { describe, expect, it } from 'vitest';
import { TRAIN_HELP } from '../../../server/cli/commands/train';
import { main } from '../../../server/cli/main';
import type { CliContext } from '../../../server/cli/context';
import { createRunBody, normalizedRunConfig, splitImageSetBody } from '../../../server/contracts';
import { codebookDocumentSchema } from '../../../server/engine';
import {
  BITS, EPSILON, INIT_LABELS, INIT_METHODS, ITERATIONS, MEAN_BITS, PATCH_SIDE, RUN_DEFAULTS, SEED, SETTING_LABELS, VECTOR_CAP, patchPositions,
} from '../../../server/engine/vocabulary';

async function cli(...argv: string[]): Promise<{ status: number; stderr: string }> {
  let stderr = '';
  const ctx: CliContext = { stdout: { write: () => {} }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  return { status: await main(argv, ctx), stderr };
}

/** The init identifiers the help lists under --init: one "name: label" line each. */
function helpInits(help: string): string[] {
  const start = help.indexOf('  --init METHOD');
  const block = help.slice(start).split('\n');
  const lines = [block[0].replace('  --init METHOD', '')];
  for (const line of block.slice(1)) {
    if (/^\s{3,}\S/.test(line) && !/^\s*--/.test(line)) lines.push(line);
    else break;
  }
  return lines.map((l) => /^\s*(\S+?):/.exec(l)?.[1] ?? `unparsed: ${l}`);
}

const baseRun = { name: 'v', trainingSetId: 1, heldOutSetId: 2, patch: { width: 4, height: 4 }, bits: 2 };

describe('the run vocabulary', () => {
  it('is what the CLI help lists under --init, with the labels, nothing more', () => {
    expect(helpInits(TRAIN_HELP)).toEqual([...INIT_METHODS]);
    for (const m of INIT_METHODS) expect(TRAIN_HELP).toContain(`${m}: ${INIT_LABELS[m]}`);
  });

  it('is what the run contracts and the codebook format accept as init, nothing more', () => {
    expect(normalizedRunConfig.shape.init.options).toEqual([...INIT_METHODS]);
    for (const init of INIT_METHODS) expect(createRunBody.safeParse({ ...baseRun, init }).success).toBe(true);
    expect(createRunBody.safeParse({ ...baseRun, init: 'median' }).success).toBe(false);
    const trainingInit = codebookDocumentSchema.shape.training.shape.init;
    expect(trainingInit.options).toEqual([...INIT_METHODS]);
  });

  it('bounds the run contract by its limits', () => {
    const ok = (extra: object) => createRunBody.safeParse({ ...baseRun, ...extra }).success;
    expect([ok({ seed: SEED.max }), ok({ seed: SEED.max + 1 }), ok({ seed: SEED.min - 1 })]).toEqual([true, false, false]);
    expect([ok({ maxVectors: VECTOR_CAP.min }), ok({ maxVectors: VECTOR_CAP.min - 1 }), ok({ maxVectors: VECTOR_CAP.max + 1 })]).toEqual([true, false, false]);
    expect([ok({ maxIterations: ITERATIONS.max }), ok({ maxIterations: ITERATIONS.max + 1 }), ok({ maxIterations: ITERATIONS.runMin - 1 })]).toEqual([true, false, false]);
    expect([ok({ epsilon: EPSILON.runMax }), ok({ epsilon: EPSILON.runMax * 1.01 }), ok({ epsilon: 0 })]).toEqual([true, false, false]);
    expect([ok({ bits: BITS.max }), ok({ bits: BITS.max + 1 }), ok({ meanBits: MEAN_BITS.max + 1 })]).toEqual([true, false, false]);
    expect(ok({ patch: { width: PATCH_SIDE.max + 1, height: 4 } })).toBe(false);
  });

  it('gives an image-set split the same seed range as a run', () => {
    // The split took seeds up to 2^32 − 1 while runs stopped at 2^31 − 1.
    const split = (seed: number) => splitImageSetBody.safeParse({ heldOutFraction: 0.25, seed }).success;
    expect([split(SEED.min), split(SEED.max), split(SEED.max + 1)]).toEqual([true, true, false]);
  });

  it('gives the CLI the same seed range as the API', async () => {
    // Before the vocabulary the CLI took seeds up to 2^32 − 1 while the API stopped at 2^31 − 1.
    const refused = await cli('train', '--vectors', 'none.npy', '--bits', '1', '--out', 'x.json', '--seed', String(SEED.max + 1));
    expect(refused.status).not.toBe(0);
    expect(refused.stderr).toContain(`--seed must be an integer from ${SEED.min} to ${SEED.max}`);
  });

  it('names the vector cap and the maximum iterations as the studio does, keeping the older CLI names', async () => {
    expect(TRAIN_HELP).toContain(`--vector-cap N        the vector cap (the studio's "${SETTING_LABELS.maxVectors}")`);
    expect(TRAIN_HELP).toContain(`--max-iterations N    the maximum iterations (the studio's "${SETTING_LABELS.maxIterations}")`);
    expect(TRAIN_HELP).toContain('--max-vectors N and --sample N are the same option under its older names');
    const both = await cli('train', '--vectors', 'none.npy', '--bits', '1', '--out', 'x.json', '--vector-cap', '500', '--sample', '500');
    expect(both.stderr).toContain('--sample is the older name of --vector-cap');
    const three = await cli('train', '--vectors', 'none.npy', '--bits', '1', '--out', 'x.json', '--vector-cap', '500', '--max-vectors', '500', '--sample', '500');
    expect(three.stderr).toContain('--max-vectors and --sample are older names of --vector-cap');
    const cap = await cli('train', '--vectors', 'none.npy', '--bits', '1', '--out', 'x.json', '--vector-cap', String(VECTOR_CAP.max + 1));
    expect(cap.stderr).toContain(`--vector-cap must be an integer from ${VECTOR_CAP.min} to ${VECTOR_CAP.max}`);
    const low = await cli('train', '--vectors', 'none.npy', '--bits', '1', '--out', 'x.json', '--sample', String(VECTOR_CAP.min - 1));
    expect(low.stderr).toContain(`--sample must be an integer from ${VECTOR_CAP.min} to ${VECTOR_CAP.max}`);
    const onVectors = await cli('train', '--vectors', 'none.npy', '--bits', '1', '--out', 'x.json', '--max-vectors', '500');
    expect(onVectors.stderr).toContain('--max-vectors applies to --images, not --vectors');
    const heldOut = await cli('sweep', '--images', 'a', '--held-out', 'b', '--heldout', 'b', '--patch', '4x4', '--bits', '1..2', '--out', 'x.csv');
    expect(heldOut.stderr).toContain('--heldout is the older name of --held-out');
    const iterations = await cli('train', '--vectors', 'none.npy', '--bits', '1', '--out', 'x.json', '--max-iterations', String(ITERATIONS.max + 1));
    expect(iterations.stderr).toContain(`--max-iterations must be an integer from ${ITERATIONS.min} to ${ITERATIONS.max}`);
  });

  it('counts patches per image once: whole patches at the stride, a small side still one patch', () => {
    expect(patchPositions(32, 32, { width: 4, height: 4 })).toBe(64);
    expect(patchPositions(34, 3, { width: 4, height: 4 })).toBe(8);
    expect(patchPositions(10, 10, { width: 4, height: 4 }, 2)).toBe(16);
  });

  it('holds defaults inside its own limits', () => {
    expect(INIT_METHODS).toContain(RUN_DEFAULTS.init);
    expect(RUN_DEFAULTS.seed).toBeLessThanOrEqual(SEED.max);
    expect(RUN_DEFAULTS.maxVectors).toBeGreaterThanOrEqual(VECTOR_CAP.min);
    expect(RUN_DEFAULTS.maxIterations).toBeLessThanOrEqual(ITERATIONS.max);
    expect(RUN_DEFAULTS.epsilon).toBeLessThanOrEqual(EPSILON.runMax);
  });
});
