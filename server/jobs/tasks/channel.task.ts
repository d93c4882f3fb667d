/**
 * Worker entry point for channel errors (server/engine/channel): PSNR against bit-error rate on held-out images, and
 * index assignment by binary switching. Plain data in and out; it never touches the database, HTTP or services.
 */
import { channelCurve, reorderCodebook, toCodebookDocument, type ChannelCurve } from '../../engine';
import { loadCharged, toCodebook, type TaskCodebook, type TaskImage } from './evaluate.task';
import { taskMemory, type TaskContext } from './task-context';

export type ChannelTask =
  | { op: 'curve'; codebook: TaskCodebook; images: TaskImage[]; bers: number[]; seeds: number; resyncRows: number }
  | { op: 'reorder'; codebook: TaskCodebook; ber: number };

export interface ReorderTaskResult {
  /** the reordered codebook's document without its codewords, and the codewords (K × d, row-major) */
  metadata: Record<string, unknown>;
  codewords: Float32Array;
  usage: number[];
  checksum: string;
  before: number;
  after: number;
  swaps: number;
}

export default async function run(task: ChannelTask, context?: TaskContext): Promise<ChannelCurve | ReorderTaskResult> {
  const book = toCodebook(task.codebook);
  if (task.op === 'reorder') {
    const r = reorderCodebook(book, { ber: task.ber });
    const { codewords: _omit, ...metadata } = toCodebookDocument(r.codebook);
    return { metadata, codewords: r.codebook.codewords, usage: Array.from(r.codebook.usage), checksum: r.codebook.checksum, before: r.before, after: r.after, swaps: r.swaps };
  }
  const memory = taskMemory(context);
  const images = [];
  for (const image of task.images) images.push(await loadCharged(image, book.patch!.color, memory));
  return channelCurve(book, images, { bers: task.bers, seeds: task.seeds, resyncRows: task.resyncRows, threads: 1 });
}
