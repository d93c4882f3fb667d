// The only server folder the client imports: request, response and error shapes of the API.
export * from './errors';
export * from './common';
export * from './vocabulary';
export * from './auth';
export * from './teams';
export * from './jobs';
export * from './job-inputs';
export * from './runs';
export * from './codebooks';
export * from './image-sets';
export * from './evaluation';
export * from './bd';
export * from './compare';
export * from './workers';
export * from './api-description';
export * from './codebook-model';
export * from './codebook-channel';
