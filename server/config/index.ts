export * from './env';
export * from './logger';
export * from './version';
export * from './loopback';
