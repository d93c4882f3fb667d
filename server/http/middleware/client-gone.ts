import type { Response } from 'express';

/**
 * A signal that aborts when the client goes away before the response is complete (the connection closes first),
 * for work the service can stop when nobody will read its answer. Node emits 'close' on the response after it
 * has finished too; only a close before that counts.
 */
export function clientGoneSignal(res: Response): AbortSignal {
  const controller = new AbortController();
  res.once('close', () => {
    if (!res.writableFinished) controller.abort(new Error('the client went away'));
  });
  return controller.signal;
}
