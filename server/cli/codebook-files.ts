import { stat } from 'node:fs/promises';
import { join } from 'node:path';
import { fixedRateBits, serializeCodebook, type Codebook } from '../engine';
import { CliInputError } from './cli-error';
import { writeOutputsAtomically } from './files';

/**
 * The file name a kept codebook gets in an output folder (`train --keep-sizes`, `sweep --out-dir`): its
 * configuration, so the files of one folder sort by shape and size and never overwrite each other within one
 * command. `4x4-luma-b6.json`, `8x8-rgb-mean6-s4-b10.json` (mean bits and stride only when given); other structures
 * add theirs before the index bits: `4x4-luma-ecvq-l50-b8.json` (λ), `4x4-luma-tree-b6.json` (`tree-greedy` when
 * unbalanced), `4x4-luma-res4+4-b8.json` (stage bits); b is the structure's fixed index bits.
 */
export function codebookFileName(book: Codebook): string {
  const parts: string[] = [];
  if (book.patch) parts.push(`${book.patch.width}x${book.patch.height}`, book.patch.color);
  else parts.push(`d${book.dimension}`);
  if (book.preprocessing.kind === 'mean-removed') parts.push(`mean${book.preprocessing.meanBits}`);
  if (book.training.stride !== undefined) parts.push(`s${book.training.stride}`);
  const s = book.structure;
  if (s.kind === 'entropy-constrained') parts.push(`ecvq-l${s.lambda}`);
  else if (s.kind === 'tree') parts.push(s.balanced ? 'tree' : 'tree-greedy');
  else if (s.kind === 'residual') parts.push(`res${s.bits.join('+')}`);
  parts.push(`b${fixedRateBits(book)}`);
  return `${parts.join('-')}.json`;
}

/** Fails before training when the folder to keep codebooks in is missing or not a folder. */
export async function checkKeepFolder(dir: string, option: string): Promise<void> {
  let isFolder = false;
  try {
    isFolder = (await stat(dir)).isDirectory();
  } catch {
    throw new CliInputError(`${option} ${dir}: no such folder`);
  }
  if (!isFolder) throw new CliInputError(`${option} ${dir} is not a folder`);
}

/** Writes every codebook into `dir` under its configuration's name, all or none; returns the paths in the order given. */
export async function writeCodebookFiles(dir: string, books: readonly Codebook[]): Promise<string[]> {
  const outputs = books.map((book) => ({ path: join(dir, codebookFileName(book)), data: serializeCodebook(book) }));
  await writeOutputsAtomically(outputs);
  return outputs.map((o) => o.path);
}
