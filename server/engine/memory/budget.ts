import { EngineError } from '../core/errors';

const KiB = 1024;
const MiB = KiB * 1024;
const GiB = MiB * 1024;

/** Bytes as a person reads them, in binary units: "1.5 GiB", "230.4 MiB", "512 KiB", "100 B". */
export function formatBytes(bytes: number): string {
  if (!Number.isFinite(bytes)) return 'unlimited';
  const abs = Math.abs(bytes);
  if (abs >= GiB) return `${(bytes / GiB).toFixed(abs >= 100 * GiB ? 0 : 1)} GiB`;
  if (abs >= MiB) return `${(bytes / MiB).toFixed(abs >= 100 * MiB ? 0 : 1)} MiB`;
  if (abs >= KiB) return `${(bytes / KiB).toFixed(abs >= 100 * KiB ? 0 : 1)} KiB`;
  return `${bytes} B`;
}

/**
 * What one task may hold in large typed arrays. A worker thread's heap limit (worker_threads resourceLimits)
 * covers JavaScript objects only: ArrayBuffer and SharedArrayBuffer memory lives outside the heap and is not
 * counted. So the engine charges every large allocation of a task (decoded images, training vectors) here
 * before making it, and refuses with ENGINE_MEMORY_LIMIT, naming the figures, instead of allocating past it.
 * Small arrays (per codeword, per block of a batch) are not charged: they are bounded by what is charged.
 */
export class MemoryBudget {
  private used = 0;
  private highest = 0;

  /**
   * @param limitBytes  the most the charges may add up to; Infinity for no limit
   * @param owner       who holds the budget and where its limit comes from, for messages ("this job task (JOB_TASK_MAX_HEAP_MB)")
   */
  constructor(
    readonly limitBytes: number,
    private readonly owner = 'this task',
  ) {
    if (!(limitBytes > 0)) throw new EngineError('ENGINE_INVALID_INPUT', `a memory budget must be positive, got ${limitBytes}`);
  }

  /** Bytes charged and not yet released. */
  get usedBytes(): number {
    return this.used;
  }

  /** The most that was ever charged at once. */
  get peakBytes(): number {
    return this.highest;
  }

  /** Records `bytes` as held, or throws ENGINE_MEMORY_LIMIT (holding nothing more) when that would pass the limit. */
  charge(bytes: number, what: string): void {
    if (!Number.isFinite(bytes) || bytes < 0) throw new EngineError('ENGINE_INVALID_INPUT', `cannot charge ${bytes} bytes for ${what}`);
    if (this.used + bytes > this.limitBytes) {
      throw new EngineError(
        'ENGINE_MEMORY_LIMIT',
        `${what} needs ${formatBytes(bytes)} (${bytes} bytes), but ${this.owner} may hold ${formatBytes(this.limitBytes)} ` +
          `and already holds ${formatBytes(this.used)}`,
        { neededBytes: bytes, heldBytes: this.used, limitBytes: this.limitBytes, what },
      );
    }
    this.used += bytes;
    if (this.used > this.highest) this.highest = this.used;
  }

  /** Gives back what an earlier charge took, once nothing refers to the memory any more. */
  release(bytes: number): void {
    this.used = Math.max(0, this.used - bytes);
  }

  /**
   * A zeroed Float32Array of `length` elements, charged here (the charge is for the life of the task).
   * `shared`: backed by a SharedArrayBuffer, so that posting it to another thread shares it instead of copying it.
   */
  float32(length: number, what: string, options: { shared?: boolean } = {}): Float32Array {
    const bytes = length * Float32Array.BYTES_PER_ELEMENT;
    this.charge(bytes, what);
    return new Float32Array(options.shared ? new SharedArrayBuffer(bytes) : new ArrayBuffer(bytes));
  }
}
