export * from './app-error';
export * from './connection-errors';
