import { describe, expect, it } from 'vitest';
import { createLogger } from '../../../server/config';
import { translateDbError } from '../../../server/db/errors';
import { isTransientDatabaseError, untilDatabaseAnswers } from '../../../server/jobs/database-retry';

const logger = createLogger('silent');
const driverError = (code: string) => Object.assign(new Error(code), { code });

describe('untilDatabaseAnswers', () => {
  it('tries a write again while the database refuses connections, then returns its result', async () => {
    let tries = 0;
    const result = await untilDatabaseAnswers(
      'test write',
      async () => {
        tries += 1;
        // As the database layer reports it: a 503 whose cause is the driver's ECONNREFUSED.
        if (tries < 3) throw translateDbError(driverError('ECONNREFUSED'));
        return 'written';
      },
      { logger, firstDelayMs: 1, maxDelayMs: 2 },
    );
    expect({ result, tries }).toEqual({ result: 'written', tries: 3 });
  });

  it('runs a transaction InnoDB rolled back as a deadlock victim again', async () => {
    let tries = 0;
    await untilDatabaseAnswers('test write', async () => {
      tries += 1;
      if (tries === 1) throw translateDbError(driverError('ER_LOCK_DEADLOCK'));
    }, { logger, firstDelayMs: 1 });
    expect(tries).toBe(2);
  });

  it('gives up at once on an error that is about the write itself', async () => {
    let tries = 0;
    const write = async () => {
      tries += 1;
      throw translateDbError(driverError('ER_DUP_ENTRY'));
    };
    await expect(untilDatabaseAnswers('test write', write, { logger, firstDelayMs: 1 })).rejects.toThrow(/already exists/);
    expect(tries).toBe(1);
    expect(isTransientDatabaseError(new Error('plain'))).toBe(false);
  });
});
