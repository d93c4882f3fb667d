import { randomBytes } from 'node:crypto';
import { readFile, readdir, rename, rm, stat, writeFile } from 'node:fs/promises';
import { basename, dirname, extname, join, resolve } from 'node:path';
import { IMAGE_EXTENSIONS } from '../engine';
import { CliInputError } from './cli-error';

function reason(error: unknown): string {
  const code = (error as NodeJS.ErrnoException).code;
  if (code === 'ENOENT') return 'no such file or directory';
  if (code === 'EACCES' || code === 'EPERM') return 'permission denied';
  if (code === 'EISDIR') return 'is a directory';
  if (code === 'ENOTDIR') return 'not a directory';
  return code ?? (error instanceof Error ? error.message : String(error));
}

export async function readInput(path: string, what: string): Promise<Buffer> {
  try {
    return await readFile(path);
  } catch (error) {
    throw new CliInputError(`cannot read ${what} ${path}: ${reason(error)}`);
  }
}

/** Fails before any long work starts when an output could not be written at the end. */
export async function checkOutputFolder(path: string): Promise<void> {
  const dir = dirname(resolve(path));
  let info;
  try {
    info = await stat(dir);
  } catch (error) {
    throw new CliInputError(`cannot write ${path}: folder ${dir}: ${reason(error)}`);
  }
  if (!info.isDirectory()) throw new CliInputError(`cannot write ${path}: ${dir} is not a folder`);
  try {
    if ((await stat(path)).isDirectory()) throw new CliInputError(`cannot write ${path}: it is a folder`);
  } catch (error) {
    if (error instanceof CliInputError) throw error;
  }
}

/**
 * Writes every output to a temporary file beside its target, then renames them all into place, so a failure leaves
 * no half-written or partial set of files; temporaries are removed on any error.
 */
export async function writeOutputsAtomically(outputs: { path: string; data: string | Uint8Array }[]): Promise<void> {
  const temps: { temp: string; path: string }[] = [];
  try {
    for (const { path, data } of outputs) {
      const temp = join(dirname(resolve(path)), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
      temps.push({ temp, path });
      await writeFile(temp, data);
    }
    for (const { temp, path } of temps) await rename(temp, path);
  } catch (error) {
    await Promise.all(temps.map(({ temp }) => rm(temp, { force: true })));
    const failed = temps.at(-1)?.path ?? outputs[0]?.path ?? '';
    throw new CliInputError(`cannot write ${failed}: ${reason(error)}`);
  }
}

/** Image files directly inside a folder (not recursive), by extension, sorted by name so runs are repeatable. */
export async function listImages(dir: string, what: string): Promise<string[]> {
  let entries: string[];
  try {
    const info = await stat(dir);
    if (!info.isDirectory()) throw new CliInputError(`${what} ${dir} is not a folder`);
    entries = await readdir(dir);
  } catch (error) {
    if (error instanceof CliInputError) throw error;
    throw new CliInputError(`cannot read ${what} ${dir}: ${reason(error)}`);
  }
  const files = entries
    .filter((name) => !name.startsWith('.') && IMAGE_EXTENSIONS.includes(extname(name).toLowerCase()))
    .sort()
    .map((name) => join(dir, name));
  if (files.length === 0) throw new CliInputError(`${what} ${dir} holds no images (${IMAGE_EXTENSIONS.join(' ')})`);
  return files;
}
