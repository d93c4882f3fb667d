import { createHash } from 'node:crypto';

/**
 * The key of a held-out image list: SHA-256 over the images' sha256 digests sorted ascending and joined by
 * "\n". It names the content, not the rows, so the same pictures give the same key in any order or set,
 * which is what lets two runs' curves be compared and reference codec points be computed once.
 */
export function heldOutHash(sha256s: readonly string[]): string {
  return createHash('sha256').update([...sha256s].sort().join('\n')).digest('hex');
}
