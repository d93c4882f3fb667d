import { QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen, within } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { Image } from '../../server/contracts';
import { UploadPanel } from '../../src/features/image-sets/components/upload-panel';
import { createQueryClient } from '../../src/lib/query-client';
import type { ServerResponse } from 'node:http';
import { setPageOrigin, startHttpServer, type RecordedRequest } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

const teamId = 3;
const setId = 8;

function stored(id: number, fileName: string): Image {
  return { id, setId, fileName, sha256: `${id}`.padStart(64, 'f'), width: 40, height: 30, channels: 1, format: 'png', bytes: 900, role: 'training', createdAt: '2026-11-30T09:00:00.000Z' };
}

/** The file names of a multipart body's parts, as the browser's FormData wrote them (RFC 7578). */
function partNames(request: RecordedRequest): string[] {
  return [...request.body.matchAll(/name="files"; filename="([^"]+)"/g)].map((m) => m[1]);
}

/**
 * jsdom's XMLHttpRequest keeps the origin its window was created with, so after setPageOrigin it treats the test
 * server as another origin and applies CORS (with a preflight, since upload progress listeners are registered).
 * A browser on the studio's own origin does neither; the test server simply allows it.
 */
const cors = { 'Access-Control-Allow-Origin': '*', 'Access-Control-Allow-Methods': 'POST', 'Access-Control-Allow-Headers': 'Accept' };

function sendJson(res: ServerResponse, status: number, body: unknown) {
  res.writeHead(status, { ...cors, 'Content-Type': 'application/json' });
  res.end(JSON.stringify(body));
}

describe('upload panel', () => {
  let server: Server;

  beforeEach(async () => {
    let nextId = 100;
    server = await startHttpServer((request, res) => {
      if (request.method === 'OPTIONS') {
        res.writeHead(204, cors);
        return res.end();
      }
      if (request.method !== 'POST' || request.url !== `/api/teams/${teamId}/image-sets/${setId}/images`) {
        return sendJson(res, 404, { error: { code: 'not_found', message: 'No route' } });
      }
      const [name] = partNames(request);
      // The answers follow the upload contract in server/contracts/image-sets.ts: 400 with the rejections in
      // details when nothing could be used, 201 with images, rejected and duplicates otherwise.
      if (name === 'cracked.png') {
        return sendJson(res, 400, {
          error: {
            code: 'bad_request',
            message: 'None of the uploaded file could be used',
            details: [{ file: 'cracked.png', message: 'cracked.png: not an image in a format the studio reads' }],
          },
        });
      }
      if (name === 'pier.zip') {
        return sendJson(res, 201, {
          images: [stored((nextId += 1), 'pier.zip/a.png'), stored((nextId += 1), 'pier.zip/b.png')],
          rejected: [{ file: 'pier.zip/notes.txt', message: 'pier.zip/notes.txt: not an image in a format the studio reads' }],
          duplicates: [],
        });
      }
      if (name === 'locked.png') return sendJson(res, 403, { error: { code: 'forbidden', message: 'Your role does not allow this' } });
      return sendJson(res, 201, { images: [stored((nextId += 1), name)], rejected: [], duplicates: [] });
    });
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    cleanup();
    await server.close();
  });

  it("sends every file on its own and shows each server verdict beside its file, keeping the good ones", async () => {
    const user = userEvent.setup();
    render(
      <QueryClientProvider client={createQueryClient()}>
        <UploadPanel teamId={teamId} setId={setId} />
      </QueryClientProvider>,
    );
    const files = [
      new File([new Uint8Array(1200)], 'dock-1.png', { type: 'image/png' }),
      new File([new Uint8Array(64)], 'cracked.png', { type: 'image/png' }),
      new File([new Uint8Array(3000)], 'pier.zip', { type: 'application/zip' }),
      new File([new Uint8Array(10)], 'locked.png', { type: 'image/png' }),
    ];
    await user.upload(screen.getByLabelText('Files to upload'), files);

    const uploads = screen.getByRole('list', { name: 'Uploads' });
    const row = (name: string) => within(uploads).getByRole('listitem', { name });
    await expect.poll(() => within(uploads).queryAllByText(/^(Stored|Not stored)/).length, { timeout: 10_000 }).toBe(4);

    expect(row('dock-1.png').textContent).toContain('Stored');
    expect(within(row('dock-1.png')).getByRole('progressbar').getAttribute('value')).toBe('100');

    // The corrupt file: not stored, with the server's own message for it.
    expect(row('cracked.png').textContent).toContain('Not stored');
    const cracked = within(row('cracked.png')).getByRole('list', { name: 'Problems with cracked.png' });
    expect(within(cracked).getAllByRole('listitem').map((li) => li.textContent)).toEqual(['cracked.png: not an image in a format the studio reads']);

    // An archive partly used: its images kept, its bad entry named under it.
    expect(row('pier.zip').textContent).toContain('Stored · 2 images');
    expect(within(row('pier.zip')).getByRole('list', { name: 'Problems with pier.zip' }).textContent).toContain('pier.zip/notes.txt');

    // A refused request is an error of that file only.
    expect(within(row('locked.png')).getByRole('alert').textContent).toBe('Your role does not allow this');

    // One request per file, each carrying exactly that file.
    expect(server.requests.filter((r) => r.method === 'POST').map(partNames).sort()).toEqual([['cracked.png'], ['dock-1.png'], ['locked.png'], ['pier.zip']]);
  });
});
