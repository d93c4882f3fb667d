import type { CodebookStructureView } from '../contracts';
import type { CodebookWithCodewords } from '../db/repositories/codebooks';
import { residualStageTables, structureFromInfo, treeLevels, type StructureInfo } from '../engine';

/**
 * The atlas's reading of a stored codebook: a tree's nodes level by level (with their cell populations, the usage a
 * tree stores per node, and which are leaves), or a residual codebook's stages with the scale their signed tiles are
 * drawn at. Flat structures answer their kind alone.
 */
export function structureViewOf(c: CodebookWithCodewords): CodebookStructureView {
  const structure = structureFromInfo(c.metadata.structure as StructureInfo | undefined);
  if (structure.kind === 'full' || structure.kind === 'entropy-constrained') return { kind: structure.kind };
  if (structure.kind === 'tree') {
    const tree = treeLevels(structure);
    const levels = tree.levels.map((nodes, level) => {
      const view = nodes.map((node) => ({
        node,
        parent: tree.parent[node] < 0 ? null : tree.parent[node],
        leaf: structure.children[2 * node] < 0,
        usage: c.usage[node] ?? 0,
      }));
      return {
        level,
        nodes: view,
        population: view.reduce((sum, n) => sum + n.usage, 0),
        leaves: view.filter((n) => n.leaf).length,
      };
    });
    return {
      kind: 'tree',
      balanced: structure.balanced,
      depth: levels.length - 1,
      leaves: levels.reduce((sum, l) => sum + l.leaves, 0),
      levels,
    };
  }
  const meanRemoved = c.meanBits > 0;
  return {
    kind: 'residual',
    search: structure.search,
    stages: residualStageTables(c.codewords, structure, c.dimension).map((t) => ({
      stage: t.stage + 1,
      bits: t.bits,
      first: t.first,
      count: t.count,
      // Later stages correct what the earlier left, so they swing around zero, as a mean-removed first stage does.
      // A stage of zeros alone would divide by zero; any positive scale draws it mid-grey.
      scale: t.stage > 0 || meanRemoved ? (t.maxAbs > 0 ? t.maxAbs : 1) : null,
      usage: c.usage.slice(t.first, t.first + t.count),
    })),
  };
}
