import { describe, expect, it } from 'vitest';
import { EngineError, MemoryBudget, formatBytes, trainingMemory } from '../../../server/engine';

describe('memory budget', () => {
  it('adds up what is charged, gives back what is released, and remembers its peak', () => {
    const budget = new MemoryBudget(1000);
    budget.charge(600, 'a');
    budget.charge(400, 'b');
    expect(budget.usedBytes).toBe(1000);
    budget.release(600);
    budget.charge(300, 'c');
    expect(budget.usedBytes).toBe(700);
    expect(budget.peakBytes).toBe(1000);
  });

  it('refuses a charge past the limit with ENGINE_MEMORY_LIMIT naming the figures, and holds nothing more', () => {
    const budget = new MemoryBudget(4 * 1024 * 1024, 'this job task (JOB_TASK_MAX_HEAP_MB)');
    budget.charge(3 * 1024 * 1024, 'the vectors');
    let caught: unknown;
    try {
      budget.float32(512 * 1024, 'decoding big.png');
    } catch (err) {
      caught = err;
    }
    expect(caught).toBeInstanceOf(EngineError);
    const err = caught as EngineError;
    expect(err.code).toBe('ENGINE_MEMORY_LIMIT');
    expect(err.message).toBe(
      'decoding big.png needs 2.0 MiB (2097152 bytes), but this job task (JOB_TASK_MAX_HEAP_MB) may hold 4.0 MiB and already holds 3.0 MiB',
    );
    expect(err.details).toEqual({ neededBytes: 2 * 1024 * 1024, heldBytes: 3 * 1024 * 1024, limitBytes: 4 * 1024 * 1024, what: 'decoding big.png' });
    expect(budget.usedBytes).toBe(3 * 1024 * 1024);
  });

  it('makes charged Float32Arrays, in shared memory when asked', () => {
    const budget = new MemoryBudget(Infinity);
    const plain = budget.float32(10, 'plain');
    const shared = budget.float32(10, 'shared', { shared: true });
    expect(plain.buffer).toBeInstanceOf(ArrayBuffer);
    expect(shared.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(budget.usedBytes).toBe(80);
  });

  it('writes sizes in binary units', () => {
    expect(formatBytes(100)).toBe('100 B');
    expect(formatBytes(1536)).toBe('1.5 KiB');
    expect(formatBytes(6 * 1024 ** 3 + 0.2 * 1024 ** 3)).toBe('6.2 GiB');
    expect(formatBytes(Infinity)).toBe('unlimited');
  });
});

describe('training memory estimate', () => {
  it('counts the vectors as N × d float32 and adds the working state, codebooks and the decoded images', () => {
    // 2 000 000 vectors of 16×16 rgb patches: what the run contract allowed, about 6 GB of vectors alone.
    const m = trainingMemory({ vectors: 2_000_000, dimension: 768, codebookSize: 256, threads: 2, largestImage: { width: 4000, height: 3000 }, color: 'rgb' });
    expect(m.vectorBytes).toBe(2_000_000 * 768 * 4);
    // sharp's 8-bit RGB plus float32 R, G, B: 15 bytes a pixel; the image decoded and the previous one, not yet collected.
    expect(m.imageBytes).toBe(2 * 4000 * 3000 * 15);
    expect(m.totalBytes).toBe(m.vectorBytes + m.searchBytes + m.boundBytes + m.codebookBytes + m.imageBytes);
    expect(m.searchBytes).toBeGreaterThan(0);
    expect(m.totalBytes).toBeGreaterThan(6e9);
  });

  it('keeps the bound table at most four times the vectors, grouping blocks beyond K = 64·d, as the search does', () => {
    const small = trainingMemory({ vectors: 100_000, dimension: 4, codebookSize: 256, threads: 1, largestImage: null, color: 'luma' });
    // The vectors take N × 4 × 4 = 1.6 MB. At K = 256 (= 64·d) the table is N × 16 × 4 = 6.4 MB, exactly four times
    // that: kept; at K/2 it is N × 8 × 4 = 3.2 MB: kept.
    expect(small.boundBytes).toBe(100_000 * 16 * 4 + 100_000 * 8 * 4);
    const large = trainingMemory({ vectors: 100_000, dimension: 4, codebookSize: 1024, threads: 1, largestImage: null, color: 'luma' });
    // K = 1024 > 64·d: one bound per block (N × 64 × 4 = 25.6 MB) passes four times the vectors, so blocks are
    // grouped four at a time (16 groups, 6.4 MB); at K/2, two at a time (16 groups again).
    expect(large.boundBytes).toBe(2 * 100_000 * 16 * 4);
    const huge = trainingMemory({ vectors: 100_000, dimension: 1, codebookSize: 4096, threads: 1, largestImage: null, color: 'luma' });
    // d = 1: four bounds per vector at most, fewer groups than are worth keeping (at K and K/2): no table.
    expect(huge.boundBytes).toBe(0);
  });

  it('grows with the threads, each of which holds the codebook', () => {
    const one = trainingMemory({ vectors: 50_000, dimension: 64, codebookSize: 4096, threads: 1, largestImage: null, color: 'luma' });
    const four = trainingMemory({ vectors: 50_000, dimension: 64, codebookSize: 4096, threads: 4, largestImage: null, color: 'luma' });
    expect(four.codebookBytes - one.codebookBytes).toBe(3 * 4096 * 64 * 8);
  });
});
