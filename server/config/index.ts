export * from './env';
export * from './worker-token';
export * from './logger';
export * from './version';
export * from './loopback';
