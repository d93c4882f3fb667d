// The rate planner's arithmetic (server/engine/rate-plan.ts) for the client: one definition of the rate rules.
export {
  MIN_VECTORS_PER_CODEWORD, PLAN_PATCHES, PLAN_STRUCTURES, PLAN_TOLERANCE, planRates, planTrainingVectors, type PlanRequest, type PlanRow, type PlanStructureId,
  type RateStructure,
} from '../engine/rate-plan';
