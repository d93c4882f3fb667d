export { ThreadBudget, threadBudget, type ThreadLease } from './thread-budget';
export { shutdownEngineWorkers, engineWorkerStats, prestartEngineWorkers } from './worker-pool';
export { NearestSearch, sharedVectors } from './nearest-search';
