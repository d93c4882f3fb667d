// The run vocabulary (server/engine/vocabulary.ts) for the API and the client: one definition of every init name,
// label, limit and default. The client reaches it only through server/contracts.
export {
  LAMBDA, MAX_LAMBDAS, parseLambdaList, STRUCTURE_KINDS, STRUCTURE_LABELS, type StructureKind,
  BD_METHOD_LABELS, BD_METHODS, BD_MIN_OVERLAP_FRACTION, BITS, bdMethodSchema, COLOR_MODES, DEFAULT_BD_METHOD, CONFIG_KEY_LABELS, EPSILON, EXACT, INIT, INIT_HINTS, INIT_LABELS, INIT_METHODS, ITERATIONS, MEAN_BITS, PATCH_SIDE, RUN_DEFAULTS,
  RUN_STATE_LABELS, RUN_STATES, SEED, SETTING_LABELS, STRIDE, VECTOR_CAP, initMethodSchema, patchPositions, positionsAlong, trainsEverySize, type ColorMode,
  type BdMethod, type InitMethod, type RunStateName,
  M_BEST, REFINEMENT_PASSES, RESIDUAL_DEFAULT_STAGES, RUN_STRUCTURE_LABELS, RUN_STRUCTURES, STAGES, parseStages, type RunStructure,
  BD_MIN_POINTS, CURVE_STRUCTURE_LABELS, CURVE_STRUCTURES, curveLabel, curveStructureOf, type CurveStructure,
  GREEDY_TREE_HEADROOM_BITS, greedyTreePlan, TREE_GROWTH_LABELS, TREE_GROWTHS, type TreeGrowthKind,
} from '../engine/vocabulary';
/** Longest path of any tree: the bound the run form's summary gives a greedy tree's longest index and encoder cost. */
export { TREE_MAX_DEPTH } from '../engine/structures/limits';
// What each structure costs a device (pure arithmetic): the run form's live summary uses the engine's one formula.
export { structureCost, type StructureCost, type StructurePlan as StructureCostPlan } from '../engine/structures/cost';
