// Hostile codebook documents: every malformed one is refused with a message that says what is wrong, no
// codebook row appears, and a body far beyond the limit is refused before it is parsed, in bounded memory.
import http from 'node:http';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { call, isErrorShape } from './routes';
import { buildWorld, codebookDocument, rowCounts, type World } from './world';

const MiB = 1024 * 1024;
let w: World;
beforeAll(async () => {
  w = await buildWorld();
});
afterAll(async () => {
  await w?.close();
});

const importUrl = () => `/api/teams/${w.teamId}/codebooks/import`;

async function expectRefused(raw: string, pattern: RegExp) {
  const before = await rowCounts(w);
  const res = await call(w, { method: 'POST', body: 'json' }, importUrl(), { token: w.engineer.token, raw });
  expect(res.status, res.text).toBe(400);
  expect(isErrorShape(res.json)).toBe(true);
  expect((res.json as { error: { message: string } }).error.message).toMatch(pattern);
  expect(await rowCounts(w)).toEqual(before);
}

/** Replaces the first codeword's first number in the serialized document with `text`. */
function withFirstComponent(text: string): string {
  return JSON.stringify(codebookDocument()).replace(/"codewords":\[\[[^,\]]+/, `"codewords":[[${text}`);
}

describe('codebook import', () => {
  it('accepts the untouched document (the cases below differ from it in one place each)', async () => {
    const res = await call(w, { method: 'POST', body: 'json' }, importUrl(), { token: w.engineer.token, raw: JSON.stringify(codebookDocument(77)) });
    expect(res.status).toBe(201);
  });

  it('refuses codewords of the wrong dimension', async () => {
    const doc = codebookDocument();
    doc.codewords[1] = doc.codewords[1].slice(0, 15);
    await expectRefused(JSON.stringify(doc), /codewords\[1\].*16/);
  });

  it('refuses a document whose dimension does not match its patch', async () => {
    await expectRefused(JSON.stringify({ ...codebookDocument(), dimension: 12 }), /dimension/);
  });

  it('refuses NaN and Infinity, which are not JSON numbers (RFC 8259 §6)', async () => {
    await expectRefused(withFirstComponent('NaN'), /not valid JSON/);
    await expectRefused(withFirstComponent('Infinity'), /not valid JSON/);
  });

  it('refuses 1e999, which parses to Infinity, as not a finite number', async () => {
    await expectRefused(withFirstComponent('1e999'), /finite/);
    await expectRefused(withFirstComponent('-1e999'), /finite/);
  });

  it('refuses numbers written as strings', async () => {
    await expectRefused(withFirstComponent('"12.5"'), /codewords\[0\]\[0\]/);
  });

  it('refuses a checksum that does not match the codewords', async () => {
    const doc = codebookDocument();
    doc.codewords[0][0] += 1;
    await expectRefused(JSON.stringify(doc), /checksum/);
  });

  it('refuses a size that disagrees with the codewords and the index bits', async () => {
    await expectRefused(JSON.stringify({ ...codebookDocument(), size: 8, bits: 3 }), /8 codewords|size/);
    await expectRefused(JSON.stringify({ ...codebookDocument(), bits: 5 }), /bits/);
  });
});

/** Streams `total` bytes of a JSON-looking body without holding it; resolves with the status and body text. */
function streamBody(total: number, declareLength: boolean): Promise<{ status: number; text: string }> {
  const url = new URL(`${w.base}${importUrl()}`);
  return new Promise((resolve, reject) => {
    const headers: Record<string, string | number> = { 'Content-Type': 'application/json', Authorization: `Bearer ${w.engineer.token}` };
    if (declareLength) headers['Content-Length'] = total;
    const req = http.request({ host: url.hostname, port: url.port, path: url.pathname, method: 'POST', headers }, (res) => {
      let text = '';
      res.setEncoding('utf8');
      res.on('data', (c: string) => (text += c));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, text }));
    });
    // The server may answer and close before the body is through; that is the point.
    req.on('error', (err: NodeJS.ErrnoException) => (err.code === 'EPIPE' || err.code === 'ECONNRESET' ? undefined : reject(err)));
    const head = Buffer.from('{"format":"cellwright-codebook","codewords":[[');
    const chunk = Buffer.from('1.5,'.repeat(MiB / 4));
    let sent = 0;
    const pump = () => {
      while (sent < total) {
        const piece = sent === 0 ? head : chunk.subarray(0, Math.min(chunk.length, total - sent));
        sent += piece.length;
        if (req.destroyed) return;
        if (!req.write(piece)) return void req.once('drain', pump);
      }
      req.end();
    };
    pump();
  });
}

describe('a 100 MB codebook body', () => {
  it('is refused with 413 from its declared length, before any of it is parsed, and memory stays bounded', async () => {
    global.gc?.();
    const before = process.memoryUsage().rss;
    const res = await streamBody(100 * MiB, true);
    const growth = process.memoryUsage().rss - before;
    expect(res.status).toBe(413);
    expect(JSON.parse(res.text)).toMatchObject({ error: { code: 'payload_too_large' } });
    // Nothing of the body is buffered when the declared length is over the limit.
    expect(growth).toBeLessThan(48 * MiB);
  });

  it('is refused with 413 when sent chunked without a length, buffering no more than the limit', async () => {
    global.gc?.();
    const before = process.memoryUsage().rss;
    const res = await streamBody(100 * MiB, false);
    const growth = process.memoryUsage().rss - before;
    expect(res.status).toBe(413);
    expect(JSON.parse(res.text)).toMatchObject({ error: { code: 'payload_too_large' } });
    // The import limit is 64 MB; reading stops there, so the growth stays near it, not near 100 MB × the JSON overhead.
    expect(growth).toBeLessThan(160 * MiB);
    const health = await call(w, { method: 'GET', body: 'none' }, '/api/health');
    expect(health.status).toBe(200);
  });
});
