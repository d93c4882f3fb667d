export { ThreadBudget, threadBudget, type ThreadLease } from './thread-budget';
export { shutdownEngineWorkers, engineWorkerStats } from './worker-pool';
export { NearestSearch, sharedVectors } from './nearest-search';
