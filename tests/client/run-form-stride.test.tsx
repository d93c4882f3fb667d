import { QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen, within } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { SETTING_LABELS, type Image, type ImageSet, type RunDetail } from '../../server/contracts';
import { RunForm } from '../../src/features/run-setup/components/run-form';
import { emptyRunForm, fromRunConfig } from '../../src/features/run-setup/run-form-schema';
import { createQueryClient } from '../../src/lib/query-client';
import { sendJson, setPageOrigin, startHttpServer } from './support/http-server';

const teamId = 1;
const stamp = '2026-11-30T09:00:00.000Z';
const image = (id: number, role: Image['role']): Image => ({
  id, setId: 10, fileName: `kelp-${id}.png`, sha256: `${id}`.padStart(64, '0'), width: 32, height: 32, channels: 3, format: 'png', bytes: 2048, role, createdAt: stamp,
});
// Two 32 × 32 training images and one held-out (invented).
const images = [image(1, 'training'), image(2, 'training'), image(3, 'held-out')];
const sets: ImageSet[] = [{ id: 10, name: 'Kelp bed', description: null, createdBy: 1, createdAt: stamp, updatedAt: stamp, counts: { total: 3, training: 2, heldOut: 1 } }];
const catalog = new Map<number, Image[]>([[10, images]]);

function renderForm() {
  const created: RunDetail[] = [];
  render(
    <QueryClientProvider client={createQueryClient()}>
      <RunForm teamId={teamId} sets={sets} catalog={catalog} defaultValues={{ ...emptyRunForm, name: 'Kelp overlap', bits: 6, trainingSetId: 10, heldOutSetId: 10 }} onCreated={(run) => created.push(run)} />
    </QueryClientProvider>,
  );
  return { created };
}

const figure = (term: string) => {
  const dt = within(screen.getByLabelText('Run summary')).getByText(term, { selector: 'dt' });
  return (dt.nextElementSibling?.textContent ?? '').replace(/\u202f/g, ' ');
};

describe('the patch stride on the new-run form', () => {
  let server: Awaited<ReturnType<typeof startHttpServer>>;

  beforeEach(async () => {
    server = await startHttpServer((request, res) => {
      if (request.method !== 'POST') return sendJson(res, 404, { error: { code: 'not_found', message: 'No route' } });
      sendJson(res, 422, { error: { code: 'validation_failed', message: 'stop here', details: [] } });
    });
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    cleanup();
    await server.close();
  });

  it('counts overlapping patches at a smaller stride and sends it; blank sends none', async () => {
    const user = userEvent.setup();
    renderForm();
    // 4 × 4 patches of two 32 × 32 images: 2 · 8 · 8 = 128 at the patch size, 2 · 15 · 15 = 450 at a stride of 2
    // ((32 − 4)/2 + 1 = 15 positions a side).
    expect(figure('Training vectors')).toBe('128');
    await user.type(screen.getByLabelText(`${SETTING_LABELS.stride} (px)`), '2');
    expect(figure('Training vectors')).toBe('450');
    expect(screen.getByLabelText('Run summary').textContent).toContain('4×4 patches every 2 px of 2 training images');
    await user.click(screen.getByRole('button', { name: 'Start run' }));
    await expect.poll(() => server.requests.length).toBe(1);
    expect(JSON.parse(server.requests[0].body)).toMatchObject({ patch: { width: 4, height: 4 }, stride: 2 });

    await user.clear(screen.getByLabelText(`${SETTING_LABELS.stride} (px)`));
    expect(figure('Training vectors')).toBe('128');
    await user.click(screen.getByRole('button', { name: 'Start run' }));
    await expect.poll(() => server.requests.length).toBe(2);
    expect(JSON.parse(server.requests[1].body)).not.toHaveProperty('stride');
  });

  it('refuses a stride past the largest patch side with the contract\u2019s bound', async () => {
    const user = userEvent.setup();
    renderForm();
    await user.type(screen.getByLabelText(`${SETTING_LABELS.stride} (px)`), '17');
    await user.click(screen.getByRole('button', { name: 'Start run' }));
    expect(await screen.findByText(`${SETTING_LABELS.stride} must be at most 16.`)).toBeTruthy();
    expect(server.requests).toHaveLength(0);
  });

  it('copies a stored run\u2019s stride into the form', () => {
    expect(fromRunConfig({ name: 'x', trainingSetId: 10, heldOutSetId: 10, patch: { width: 8, height: 8 }, stride: 4, bits: 6 }, 'x again').stride).toBe(4);
    expect(fromRunConfig({ name: 'x', trainingSetId: 10, heldOutSetId: 10, patch: { width: 8, height: 8 }, bits: 6 }, 'x again').stride).toBeNull();
  });
});
