import type { CodebookDetail, CodebookStructureView, CodebookSummary, ExportTarget } from '../contracts';
import type { CodebookSummaryRecord, CodebookWithCodewords, Database } from '../db';
import {
  codewordChecksum, decoderCost, EngineInputError, fixedRateBits, parseCodebook, partitionRows, serializeCodebook, structureFromInfo, toCodebookDocument, writeNpy, type Codebook, type StructureInfo,
} from '../engine';
import { notFound, validationFailed } from '../errors';
import { recordAudit } from './audit';
import { structureViewOf } from './codebook-structure-view';

/** The API's summary of a stored codebook (lists, and the release report's header). */
export function codebookSummaryOf(c: CodebookSummaryRecord): CodebookSummary {
  return {
    id: c.id,
    name: c.name,
    source: c.source,
    runId: c.runId,
    origin: c.runName ?? 'imported',
    bits: c.bits,
    size: c.size,
    dimension: c.dimension,
    patch: c.patch,
    color: c.color,
    channels: c.channels,
    meanBits: c.meanBits,
    structure: c.structure,
    lambda: c.lambda,
    checksum: c.checksum,
    distortion: c.distortion,
    createdAt: c.createdAt,
  };
}

function rows(codewords: Float32Array, size: number, dimension: number): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < size; i += 1) out.push(Array.from(codewords.subarray(i * dimension, (i + 1) * dimension)));
  return out;
}

/**
 * The stored codebook as the engine's in-memory form, re-validated through the export schema (checksum included),
 * so a damaged row is reported instead of exported.
 */
export function engineCodebookOf(c: CodebookWithCodewords): Codebook {
  return parseCodebook({ ...c.metadata, codewords: rows(c.codewords, c.size, c.dimension) }, `codebook ${c.id}`);
}

/** `<name>-b<bits>.cellwright.json` with anything but ASCII letters, digits, dot, dash and underscore folded to '-'. */
export function exportFileName(name: string, bits: number): string {
  const base = name
    .normalize('NFKD')
    // Decomposed accents drop their combining marks (U+0300–U+036F), so "é" becomes "e" rather than "-".
    .replace(/[\u0300-\u036f]/g, '')
    .replace(/[^A-Za-z0-9._-]+/g, '-')
    .replace(/^[-.]+|[-.]+$/g, '')
    .replace(/-{2,}/g, '-')
    .slice(0, 80);
  return `${base || 'codebook'}-b${bits}.cellwright.json`;
}

/**
 * Codewords as the detail view sends them (shortest round-tripping decimals), remembered by content. Finding the
 * shortest decimal of every value takes several toPrecision calls each and dominated a detail read; the result depends
 * only on the float32 values and the dimension, and the checksum is a SHA-256 of exactly those values, so an entry can
 * never go stale. Bounded by the number of values held; the least recently read entry goes first.
 */
export function createCodewordRowsMemo(maxValues = 1 << 20) {
  const entries = new Map<string, number[][]>();
  let held = 0;
  return {
    get(c: CodebookWithCodewords): number[][] {
      // Re-checked on every read so a damaged row is still reported (by the full path below) rather than served.
      const key = `${c.dimension}:${c.checksum}`;
      const hit = codewordChecksum(c.codewords) === c.checksum ? entries.get(key) : undefined;
      if (hit) {
        entries.delete(key);
        entries.set(key, hit);
        return hit;
      }
      const computed = toCodebookDocument(engineCodebookOf(c)).codewords;
      if (c.codewords.length <= maxValues) {
        entries.set(key, computed);
        held += c.codewords.length;
        for (const [k, v] of entries) {
          if (held <= maxValues) break;
          entries.delete(k);
          held -= v.length * (v[0]?.length ?? 0);
        }
      }
      return computed;
    },
  };
}

export function createCodebooksService(deps: { db: Database }) {
  const { db } = deps;
  const codewordRows = createCodewordRowsMemo();

  async function mustFind(teamId: number, id: number): Promise<CodebookWithCodewords> {
    const c = await db.repos.codebooks.findForTeam(teamId, id);
    if (!c) throw notFound('Codebook');
    return c;
  }

  function toDetail(c: CodebookWithCodewords): CodebookDetail {
    // The trace is sent once, at the top level, not a second time inside training.
    const { trace: _trace, ...training } = (c.metadata.training ?? {}) as Record<string, unknown>;
    return {
      ...codebookSummaryOf(c),
      usage: c.usage,
      cellDistortion: c.cellDistortion,
      trace: c.trace,
      // Shortest decimals that read back to the same float32, exactly as the export writes them.
      codewords: codewordRows.get(c),
      training,
      ...structureFigures(c),
    };
  }

  /** The stored document's structure (absent in revision 1: full search) as the page's index bits, stages and decoder cost. */
  function structureFigures(c: CodebookWithCodewords): Pick<CodebookDetail, 'indexBits' | 'stages' | 'decoderCost' | 'partitionRows'> {
    const structure = structureFromInfo(c.metadata.structure as StructureInfo | undefined);
    const preprocessing = c.meanBits > 0 ? { kind: 'mean-removed' as const, meanBits: c.meanBits } : { kind: 'none' as const };
    return {
      indexBits: fixedRateBits({ size: c.size, structure }),
      stages: structure.kind === 'residual' ? [...structure.bits] : null,
      partitionRows: partitionRows(structure),
      decoderCost: decoderCost({ size: c.size, dimension: c.dimension, codewords: c.codewords, preprocessing, structure, patch: c.patch }),
    };
  }

  return {
    async list(teamId: number): Promise<CodebookSummary[]> {
      return (await db.repos.codebooks.listForTeam(teamId)).map(codebookSummaryOf);
    },

    async get(teamId: number, id: number): Promise<CodebookDetail> {
      return toDetail(await mustFind(teamId, id));
    },

    /** How the codebook's table reads by tree level or residual stage, for the atlas (codebook-structure-view.ts). */
    async structure(teamId: number, id: number): Promise<CodebookStructureView> {
      return structureViewOf(await mustFind(teamId, id));
    },

    /**
     * The codebook document (or, for `npy`, its codewords as a NumPy .npy file, K × dimension float32) and the file
     * name to offer it under; recorded in the audit trail.
     */
    async export(teamId: number, userId: number, id: number, target: ExportTarget = 'json'): Promise<{ fileName: string; body: string | Buffer }> {
      const c = await mustFind(teamId, id);
      const book = engineCodebookOf(c);
      const body = target === 'npy' ? writeNpy(book.codewords, book.size, book.dimension) : serializeCodebook(book);
      await recordAudit(db.repos, {
        teamId,
        actorUserId: userId,
        action: 'codebook.exported',
        targetType: 'codebook',
        targetId: id,
        details: { checksum: c.checksum, size: c.size, target },
      });
      const fileName = exportFileName(c.runName ?? c.name, c.bits);
      return { fileName: target === 'npy' ? fileName.replace(/\.cellwright\.json$/, '.codewords.npy') : fileName, body };
    },

    /** Validates a codebook document (schema and checksum) and stores it as an imported codebook. */
    async import(teamId: number, userId: number, document: unknown, name?: string): Promise<CodebookDetail> {
      let codebook: Codebook;
      try {
        codebook = parseCodebook(document, 'codebook');
      } catch (err) {
        if (err instanceof EngineInputError) {
          throw validationFailed(err.message, [{ path: err.field ?? '(root)', message: err.message }]);
        }
        throw err;
      }
      if (!codebook.patch) {
        throw validationFailed('This codebook has no patch geometry, so it cannot code images', [
          { path: 'patch', message: 'expected {width, height, channels, color}: a codebook without a patch cannot code images' },
        ]);
      }
      const patch = codebook.patch;
      const { codewords: _omit, ...metadata } = toCodebookDocument(codebook);
      const id = await db.transaction(async (tx) => {
        const newId = await tx.codebooks.insert({
          teamId,
          runId: null,
          name: name ?? (codebook.training.source.trim().slice(0, 200) || 'imported codebook'),
          source: 'imported',
          bits: codebook.bits,
          size: codebook.size,
          dimension: codebook.dimension,
          patch: { width: patch.width, height: patch.height },
          channels: patch.channels,
          color: patch.color,
          meanBits: codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0,
          codewords: codebook.codewords,
          usage: Array.from(codebook.usage),
          cellDistortion: null,
          trace: codebook.training.trace,
          metadata,
          checksum: codebook.checksum,
        });
        await recordAudit(tx, {
          teamId,
          actorUserId: userId,
          action: 'codebook.imported',
          targetType: 'codebook',
          targetId: newId,
          details: { checksum: codebook.checksum, size: codebook.size },
        });
        return newId;
      });
      return toDetail(await mustFind(teamId, id));
    },
  };
}

export type CodebooksService = ReturnType<typeof createCodebooksService>;
