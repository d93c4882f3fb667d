import type { JobHandlers } from '../types';
import { evaluateHandler } from './evaluate';
import { anomalyHandler, denoiseHandler } from './model';
import { trainHandler } from './train';

/** The runner dispatches each claimed job to the handler of its kind. */
export const jobHandlers: JobHandlers = { train: trainHandler, evaluate: evaluateHandler, anomaly: anomalyHandler, denoise: denoiseHandler };
