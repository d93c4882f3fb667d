// Structured codebooks: one function per kind to train, encode and decode, the structure types the format mirrors,
// their limits and their cost summary. README.md beside this file describes the models.
export * from './types';
export * from './limits';
export { trainTree, encodeTree, decodeTree, checkTree, leafCodewords, treeDistortions, type TreeCodes, type TreeGrowth, type TreeGrowthStep, type TreeOptions, type TreePruneStep, type TreeResult } from './tree';
export {
  trainResidual, encodeResidual, decodeResidual, checkResidual,
  type ResidualCodes, type ResidualOptions, type ResidualRefinementStep, type ResidualResult, type ResidualSearch, type ResidualStageStat,
} from './residual';
export { structureCost, codebookCost, planOf, type StructureCost, type StructurePlan } from './cost';
export { treeLevels, ancestorsAtLevel, residualStageTables, partitionRows, type TreeLevels, type ResidualStageTable } from './levels';
export { TreeShardState, openLocalTreeShards } from './tree-shards';
