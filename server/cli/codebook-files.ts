import { stat } from 'node:fs/promises';
import { join } from 'node:path';
import { serializeCodebook, type Codebook } from '../engine';
import { CliInputError } from './cli-error';
import { writeOutputsAtomically } from './files';

/**
 * The file name a kept codebook gets in an output folder (`train --keep-sizes`, `sweep --out-dir`): its
 * configuration, so the files of one folder sort by shape and size and never overwrite each other within one
 * command. `4x4-luma-b6.json`, `8x8-rgb-mean6-s4-b10.json` (mean bits and stride only when given).
 */
export function codebookFileName(book: Codebook): string {
  const parts: string[] = [];
  if (book.patch) parts.push(`${book.patch.width}x${book.patch.height}`, book.patch.color);
  else parts.push(`d${book.dimension}`);
  if (book.preprocessing.kind === 'mean-removed') parts.push(`mean${book.preprocessing.meanBits}`);
  if (book.training.stride !== undefined) parts.push(`s${book.training.stride}`);
  parts.push(`b${book.bits}`);
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
