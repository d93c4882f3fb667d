export type LocalCheck = { ok: true; document: Record<string, unknown>; outline: string } | { ok: false; message: string };

/**
 * Reads pasted or loaded text as a codebook document far enough to catch the plain mistakes (not JSON, not an
 * object, no codewords) before a large upload. The document's full schema and its checksum live in the engine and
 * are checked by the server on import, which answers with the field at fault.
 */
export function readCodebookText(text: string): LocalCheck {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    return { ok: false, message: `This is not valid JSON: ${error instanceof Error ? error.message : String(error)}` };
  }
  if (typeof value !== 'object' || value === null || Array.isArray(value)) {
    return { ok: false, message: 'A codebook document is a JSON object with format, size, patch, codewords and checksum.' };
  }
  const doc = value as Record<string, unknown>;
  if (!Array.isArray(doc.codewords)) return { ok: false, message: 'codewords: expected an array of codewords.' };
  const first = doc.codewords[0];
  const dimension = Array.isArray(first) ? first.length : 0;
  const patch = (doc.patch ?? null) as { width?: unknown; height?: unknown; color?: unknown } | null;
  const shape = patch && typeof patch.width === 'number' && typeof patch.height === 'number' ? `${patch.width}×${patch.height} ${String(patch.color ?? '')}`.trim() : 'no patch';
  return { ok: true, document: doc, outline: `${doc.codewords.length} codewords × ${dimension} components, ${shape}` };
}
