import { QueryClientProvider } from '@tanstack/react-query';
import { cleanup, fireEvent, render, screen, within } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { INIT_LABELS, INIT_METHODS, SETTING_LABELS, type Image, type ImageSet, type RunDetail } from '../../server/contracts';
import { RunForm } from '../../src/features/run-setup/components/run-form';
import { emptyRunForm, fromRunConfig, type RunFormValues } from '../../src/features/run-setup/run-form-schema';
import { createQueryClient } from '../../src/lib/query-client';
import { sendJson, setPageOrigin, startHttpServer } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

const teamId = 1;
const stamp = '2026-11-30T09:00:00.000Z';

function image(id: number, setId: number, role: Image['role'], width = 32, height = 32, sha = `${id}`.padStart(64, '0')): Image {
  return { id, setId, fileName: `reef-${id}.png`, sha256: sha, width, height, channels: 3, format: 'png', bytes: 2048, role, createdAt: stamp };
}

function imageSet(id: number, name: string, images: Image[]): ImageSet {
  const training = images.filter((i) => i.role === 'training').length;
  return { id, name, description: null, createdBy: 1, createdAt: stamp, updatedAt: stamp, counts: { total: images.length, training, heldOut: images.length - training } };
}

// Set 10: two 32 × 32 training images and one held-out; set 20: two images, none marked held-out.
const split = [image(1, 10, 'training'), image(2, 10, 'training'), image(3, 10, 'held-out')];
const unsplit = [image(4, 20, 'training', 64, 64), image(5, 20, 'training', 64, 64)];
const sets = [imageSet(10, 'Kelp bed, split', split), imageSet(20, 'Quay wall, unsplit', unsplit)];
const catalog = new Map<number, Image[]>([
  [10, split],
  [20, unsplit],
]);

function createdRun(body: RunDetail['config']): RunDetail {
  return {
    id: 77,
    name: body.name,
    notes: body.notes ?? null,
    state: 'queued',
    error: null,
    createdBy: { id: 2, name: 'Tomas Reyl' },
    createdAt: stamp,
    finishedAt: null,
    heldOutHash: 'a'.repeat(64),
    progress: 0,
    bestOperatingPoint: null,
    config: body,
    normalized: {
      trainingImageIds: [1, 2],
      heldOutImageIds: [3],
      patch: body.patch,
      color: 'luma',
      meanBits: 0,
      bits: { from: 1, to: 4 },
      sizes: [2, 4, 8, 16],
      init: 'split',
      epsilon: 1e-4,
      maxIterations: 100,
      maxVectors: 200_000,
      seed: 1,
    },
    jobs: [],
    codebooks: [],
  };
}

function renderForm(values: Partial<RunFormValues> = {}) {
  const created: RunDetail[] = [];
  render(
    <QueryClientProvider client={createQueryClient()}>
      <RunForm
        teamId={teamId}
        sets={sets}
        catalog={catalog}
        defaultValues={{ ...emptyRunForm, trainingSetId: 10, heldOutSetId: 10, ...values }}
        onCreated={(run) => created.push(run)}
      />
    </QueryClientProvider>,
  );
  return { created };
}

/** The summary's figure for a term, e.g. "Vector dimension d" → "16". */
function figure(term: string): string {
  const summary = screen.getByLabelText('Run summary');
  const dt = within(summary).getByText(term, { selector: 'dt' });
  return (dt.nextElementSibling?.textContent ?? '').replace(/\u202f/g, ' ');
}

describe('new run form', () => {
  let server: Server;
  let answer: (body: unknown) => { status: number; body: unknown };

  beforeEach(async () => {
    answer = (body) => ({ status: 201, body: { run: createdRun(body as RunDetail['config']) } });
    server = await startHttpServer((request, res) => {
      if (request.method !== 'POST' || request.url !== `/api/teams/${teamId}/runs`) return sendJson(res, 404, { error: { code: 'not_found', message: 'No route' } });
      const reply = answer(JSON.parse(request.body));
      sendJson(res, reply.status, reply.body);
    });
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    cleanup();
    await server.close();
  });

  it('summarises 4×4 luma, b = 8, no mean bits as 256 codewords of d = 16 at 0.5 bpp, 16 384 bytes as float32', () => {
    renderForm();
    // Arithmetic of the definitions (common practice): K = 2^8 = 256, d = 4·4·1 = 16, rate (8 + 0)/(4·4) = 0.5 bpp,
    // K·d·4 = 16 384 bytes as float32 and K·d = 4 096 bytes as 8-bit samples.
    expect(figure('Codebook size')).toBe('256 codewords');
    expect(figure('Vector dimension d')).toBe('16');
    expect(figure('Fixed rate')).toBe('0.5 bpp');
    expect(figure('Codebook as float32')).toMatch(/^16 384 B/);
    expect(figure('Codebook as 8-bit')).toMatch(/^4 096 B/);
    // Two 32 × 32 training images cut into 4 × 4 patches: 2 · 8 · 8 = 128 vectors; the held-out image is not counted.
    expect(figure('Training vectors')).toBe('128');
    expect(figure('Held-out images')).toBe('1');
  });

  it('follows rgb, mean removal and patch shape: 8×8 rgb with b = 6 and m = 2 is d = 192 at 0.125 bpp', async () => {
    const user = userEvent.setup();
    renderForm({ bits: 6 });
    await user.click(screen.getByRole('button', { name: '8×8' }));
    await user.click(screen.getByRole('radio', { name: /RGB/ }));
    await user.selectOptions(screen.getByLabelText('Mean removal'), 'm = 2 mean bits');
    // d = 8·8·3 = 192; (6 + 2)/(8·8) = 0.125 bpp; 64·192·4 = 49 152 bytes (common practice: float32 codewords).
    expect(figure('Codebook size')).toBe('64 codewords');
    expect(figure('Vector dimension d')).toBe('192');
    expect(figure('Fixed rate')).toBe('0.125 bpp');
    expect(figure('Codebook as float32')).toMatch(/^49 152 B/);
    // 32 × 32 images hold 4 · 4 patches of 8 × 8 each.
    expect(figure('Training vectors')).toBe('32');
  });

  it('explains a budget with more codewords than training vectors before submitting, and sends nothing', async () => {
    const user = userEvent.setup();
    renderForm({ name: 'Too ambitious' });
    // b = 8 asks for 256 codewords; the two training images give 128 patches of 4 × 4.
    const problems = screen.getByRole('status', { name: 'Problems to fix' });
    expect(problems.textContent?.replace(/\u202f/g, ' ')).toContain('b = 8 means 256 codewords');
    expect(problems.textContent).toContain('128 patches of 4×4');

    await user.click(screen.getByRole('button', { name: 'Start run' }));
    const slider = screen.getByLabelText('Bits per block, b');
    expect(slider.getAttribute('aria-invalid')).toBe('true');
    expect(document.getElementById(slider.getAttribute('aria-describedby') ?? '')?.textContent).toContain('b = 8 means 256 codewords');
    expect(server.requests).toHaveLength(0);

    // Lowering b clears the problem at once.
    fireEvent.change(slider, { target: { value: '7' } });
    expect(screen.queryByRole('status', { name: 'Problems to fix' })).toBeNull();
    expect(figure('Codebook size')).toBe('128 codewords');
  });

  it('refuses an image that is both training and held-out, and a set with no held-out images', async () => {
    const user = userEvent.setup();
    renderForm({ name: 'Overlap', bits: 4, trainingBy: 'images', trainingImageIds: [1, 2], heldOutBy: 'images', heldOutImageIds: [2] });
    const problems = () => screen.getByRole('status', { name: 'Problems to fix' }).textContent ?? '';
    expect(problems()).toContain('An image is both training and held-out (reef-2.png)');

    // Same pixels under another id still count as the same image.
    cleanup();
    const twin = image(9, 20, 'held-out', 32, 32, split[0].sha256);
    catalog.set(20, [...unsplit, twin]);
    try {
      renderForm({ name: 'Twin', bits: 4, heldOutBy: 'images', heldOutImageIds: [9] });
      expect(problems()).toContain('An image is both training and held-out (reef-9.png)');
    } finally {
      catalog.set(20, unsplit);
    }

    cleanup();
    renderForm({ name: 'No held-out', bits: 4, trainingSetId: 20, heldOutSetId: 20 });
    expect(problems()).toContain('No held-out images');
    await user.click(screen.getByRole('button', { name: 'Start run' }));
    expect(screen.getByLabelText('Held-out set').getAttribute('aria-invalid')).toBe('true');
    expect(server.requests).toHaveLength(0);
  });

  it('offers exactly the vocabulary\'s init methods, by their labels, the default selected', () => {
    renderForm();
    const select = screen.getByLabelText(SETTING_LABELS.init) as HTMLSelectElement;
    const options = [...select.options];
    expect(options.map((o) => o.value)).toEqual([...INIT_METHODS]);
    options.forEach((o, i) => expect(o.textContent).toContain(INIT_LABELS[INIT_METHODS[i]]));
    expect(select.value).toBe(emptyRunForm.init);
  });

  it('explains out-of-range values with the bounds of the shared contract', async () => {
    const user = userEvent.setup();
    renderForm({ name: 'Odd patch' });
    const width = screen.getByLabelText('Width (px)');
    await user.clear(width);
    await user.type(width, '17');
    await user.click(screen.getByRole('button', { name: 'Start run' }));
    // createRunBody bounds patch sides to 2..16.
    expect(await screen.findByText('Patch width must be at most 16.')).toBeTruthy();
    await user.clear(screen.getByLabelText('ε (stop threshold)'));
    await user.type(screen.getByLabelText('ε (stop threshold)'), '0');
    expect(await screen.findByText('ε must be above 0.')).toBeTruthy();
    expect(server.requests).toHaveLength(0);
  });

  it('posts a b = 1..4 sweep as the contract body and hands the created run on', async () => {
    const user = userEvent.setup();
    const { created } = renderForm({ name: '  Kelp 4×4 sweep ', notes: 'first look' });
    await user.click(screen.getByText('A range'));
    fireEvent.change(screen.getByLabelText('Highest b'), { target: { value: '4' } });
    fireEvent.change(screen.getByLabelText('Lowest b'), { target: { value: '1' } });
    const summary = screen.getByLabelText('Run summary').textContent?.replace(/\u202f/g, ' ');
    expect(summary).toContain('2 … 16 codewords');
    expect(screen.getByRole('table', { name: 'Codebooks of the sweep' }).querySelectorAll('tbody tr')).toHaveLength(4);

    await user.click(screen.getByRole('button', { name: 'Start run · 4 codebooks' }));
    await expect.poll(() => created.length).toBe(1);
    expect(created[0].id).toBe(77);
    expect(server.requests).toHaveLength(1);
    expect(JSON.parse(server.requests[0].body)).toEqual({
      name: 'Kelp 4×4 sweep',
      notes: 'first look',
      trainingSetId: 10,
      heldOutSetId: 10,
      patch: { width: 4, height: 4 },
      color: 'luma',
      meanBits: 0,
      bits: { from: 1, to: 4 },
      init: 'split',
      epsilon: 1e-4,
      maxIterations: 100,
      maxVectors: 200_000,
      seed: 1,
    });
  });

  it("copies a stored run's configuration into the form for running it again with changes", () => {
    const values = fromRunConfig(
      { name: 'Kelp rgb', trainingImageIds: [1, 2], heldOutSetId: 20, patch: { width: 8, height: 4 }, color: 'rgb', meanBits: 3, bits: { from: 2, to: 5 }, init: 'kmeans++', seed: 42 },
      'Kelp rgb (changed)',
    );
    renderForm(values);
    expect((screen.getByLabelText('Name') as HTMLInputElement).value).toBe('Kelp rgb (changed)');
    expect((screen.getByLabelText('Width (px)') as HTMLInputElement).value).toBe('8');
    expect((screen.getByLabelText('Height (px)') as HTMLInputElement).value).toBe('4');
    expect((screen.getByRole('radio', { name: /RGB/ }) as HTMLInputElement).checked).toBe(true);
    expect((screen.getByLabelText('Lowest b') as HTMLInputElement).value).toBe('2');
    expect((screen.getByLabelText('Highest b') as HTMLInputElement).value).toBe('5');
    expect((screen.getByLabelText('Initialisation') as HTMLSelectElement).value).toBe('kmeans++');
    expect((screen.getByLabelText('Held-out set') as HTMLSelectElement).value).toBe('20');
    expect(within(screen.getByRole('group', { name: 'Chosen training images' })).getByText('2 images chosen')).toBeTruthy();
    // Options the stored run left out take the server's defaults, shown as such.
    expect((screen.getByLabelText('Maximum iterations') as HTMLInputElement).value).toBe('100');
    // d = 8·4·3 = 96; rates (b + 3)/32 for b = 2..5.
    expect(figure('Vector dimension d')).toBe('96');
    expect(figure('Fixed rate')).toBe('0.1563 … 0.25 bpp');
  });

  it("puts the server's field message beside the field it names", async () => {
    answer = () => ({
      status: 400,
      body: {
        error: {
          code: 'validation_failed',
          message: 'Too few training vectors for the largest codebook',
          details: [{ path: 'bits', message: 'the training images give 100 vectors of 4×4; b = 7 needs at least 128' }],
        },
      },
    });
    const user = userEvent.setup();
    renderForm({ name: 'Server knows better', bits: 7 });
    await user.click(screen.getByRole('button', { name: 'Start run' }));
    expect(await screen.findByText('Too few training vectors for the largest codebook')).toBeTruthy();
    const slider = screen.getByLabelText('Bits per block, b');
    expect(document.getElementById(slider.getAttribute('aria-describedby') ?? '')?.textContent).toBe(
      'The training images give 100 vectors of 4×4; b = 7 needs at least 128',
    );
  });
});
