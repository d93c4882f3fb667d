import express from 'express';
import knexFactory from 'knex';
import multer from 'multer';
import request from 'supertest';
import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { errorBody } from '../../server/contracts';
import { buildKnexConfig } from '../../server/db';
import { conflict } from '../../server/errors';
import { apiNotFound, errorHandler } from '../../server/http/middleware/error-handler';
import { testDbSettings } from '../helpers/db';

/** A bare app whose routes fail in the ways real handlers do, rendered by the one error handler. */
function appWith(register: (app: express.Express) => void) {
  const app = express();
  app.use(express.json({ limit: '1kb' }));
  register(app);
  app.use('/api', apiNotFound);
  app.use(errorHandler);
  return app;
}

describe('error rendering', () => {
  it('answers an unexpected exception with a generic 500 that leaks nothing of it', async () => {
    const app = appWith((a) =>
      a.get('/api/boom', () => {
        throw new Error('connection string mysql://root:hunter2@db');
      }),
    );
    const res = await request(app).get('/api/boom');
    expect(res.status).toBe(500);
    expect(errorBody.parse(res.body).error.code).toBe('internal');
    expect(JSON.stringify(res.body)).not.toContain('hunter2');
  });

  it('answers a rejected async handler the same way', async () => {
    const app = appWith((a) =>
      a.get('/api/async', async () => {
        await Promise.resolve();
        throw new TypeError('undefined is not a function');
      }),
    );
    const res = await request(app).get('/api/async');
    expect(res.status).toBe(500);
    expect(res.body.error.message).not.toContain('undefined');
  });

  it('turns a ZodError thrown by a handler into 400 validation_failed with path and message', async () => {
    const schema = z.object({ bits: z.number().int().min(1).max(16) });
    const app = appWith((a) =>
      a.post('/api/parse', (req, res) => {
        res.json(schema.parse(req.body));
      }),
    );
    const res = await request(app).post('/api/parse').send({ bits: 40 });
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
    expect(res.body.error.details).toEqual([{ path: 'bits', message: expect.stringMatching(/16/) }]);
  });

  it('renders an AppError with its own status, code and details', async () => {
    const app = appWith((a) =>
      a.get('/api/taken', () => {
        throw conflict('Name taken', { field: 'name' });
      }),
    );
    const res = await request(app).get('/api/taken');
    expect(res.status).toBe(409);
    expect(res.body).toEqual({ error: { code: 'conflict', message: 'Name taken', details: { field: 'name' } } });
  });

  it('answers an upload over the multer size limit with 413 and other multer failures with 400', async () => {
    const upload = multer({ storage: multer.memoryStorage(), limits: { fileSize: 16 } });
    const app = appWith((a) => a.post('/api/upload', upload.single('image'), (_req, res) => res.status(204).end()));
    const big = await request(app).post('/api/upload').attach('image', Buffer.alloc(64, 1), 'big.png');
    expect(big.status).toBe(413);
    expect(big.body.error.code).toBe('payload_too_large');
    const wrongField = await request(app).post('/api/upload').attach('other', Buffer.alloc(4, 1), 'x.png');
    expect(wrongField.status).toBe(400);
    expect(wrongField.body.error.details).toMatchObject({ reason: 'LIMIT_UNEXPECTED_FILE' });
  });

  it('answers a knex pool timeout with 503 service_unavailable', async () => {
    // A pool of one whose only connection is held by an open transaction: the next query must time out.
    const config = buildKnexConfig(testDbSettings(), { min: 0, max: 1 });
    const knex = knexFactory({ ...config, acquireConnectionTimeout: 200 });
    const trx = await knex.transaction();
    try {
      const app = appWith((a) =>
        a.get('/api/slow', async (_req, res) => {
          res.json(await knex.raw('SELECT 1'));
        }),
      );
      const res = await request(app).get('/api/slow');
      expect(res.status).toBe(503);
      expect(res.body.error.code).toBe('service_unavailable');
    } finally {
      await trx.rollback();
      await knex.destroy();
    }
  });
});
