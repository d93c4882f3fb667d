import { zodResolver } from '@hookform/resolvers/zod';
import { useMemo, useRef, type ReactNode } from 'react';
import { useForm, type Resolver } from 'react-hook-form';
import {
  EPSILON, LAMBDA, M_BEST, MAX_LAMBDAS, INIT_HINTS, INIT_LABELS, INIT_METHODS, REFINEMENT_PASSES, RESIDUAL_DEFAULT_STAGES, RUN_STRUCTURE_LABELS, RUN_STRUCTURES, SETTING_LABELS, STAGES, STRIDE, TREE_GROWTH_LABELS, TREE_GROWTHS,
  type CreateRunBody, type ImageSet, type RunDetail,
} from '../../../../server/contracts';
import { isApiError, messageOf } from '../../../lib/api-client';
import { plural } from '../../../lib/format';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { CautionNote } from '../../../components/ui/caution-note';
import { SelectField, TextField } from '../../../components/ui/field';
import { useCreateRun } from '../api/create-run';
import { runFormSchema, serverIssues, toPlanInput, type RunFormValues } from '../run-form-schema';
import { planRun, type ImageCatalog } from '../run-plan';
import { BitBudgetField } from './bit-budget-field';
import { ChoiceGroup } from './choice-group';
import { ImagePicker } from './image-picker';
import { RatePlanner } from './rate-planner';
import { RunSummary } from './run-summary';
import { StructureSummary } from './structure-summary';

const patchPresets = [
  { width: 2, height: 2 },
  { width: 4, height: 4 },
  { width: 8, height: 8 },
  { width: 4, height: 2 },
] as const;

function Section({ title, description, children }: { title: string; description?: ReactNode; children: ReactNode }) {
  const id = `run-section-${title.toLowerCase().replace(/\W+/g, '-')}`;
  return (
    <section aria-labelledby={id} className="rounded-lg border border-ink-200 bg-surface shadow-card">
      <header className="border-b border-ink-100 px-5 py-3">
        <h2 id={id} className="text-base font-semibold text-ink-900">
          {title}
        </h2>
        {description && <p className="mt-0.5 text-sm text-ink-600">{description}</p>}
      </header>
      <div className="flex flex-col gap-4 px-5 py-4">{children}</div>
    </section>
  );
}

function setLabel(set: ImageSet) {
  return `${set.name} — ${set.counts.training} training, ${set.counts.heldOut} held-out`;
}

/**
 * The new-run form. Its resolver is the shared createRunBody contract plus the checks that need the images, so
 * whatever it accepts the server accepts too; the summary beside it recomputes on every change and names each
 * problem before anything is sent.
 */
export function RunForm({
  teamId,
  sets,
  catalog,
  defaultValues,
  onCreated,
}: {
  teamId: number;
  sets: readonly ImageSet[];
  catalog: ImageCatalog;
  defaultValues: RunFormValues;
  onCreated: (run: RunDetail) => void;
}) {
  const create = useCreateRun(teamId);
  // The resolver reads the newest catalog through a ref, so images loading late never leave it checking old data.
  const catalogRef = useRef(catalog);
  catalogRef.current = catalog;
  const resolver = useMemo<Resolver<RunFormValues, unknown, CreateRunBody>>(
    () => (values, context, options) => zodResolver(runFormSchema(catalogRef.current))(values, context, options) as ReturnType<Resolver<RunFormValues, unknown, CreateRunBody>>,
    [],
  );
  const form = useForm<RunFormValues, unknown, CreateRunBody>({ resolver, defaultValues, mode: 'onSubmit', reValidateMode: 'onChange' });
  const { errors } = form.formState;
  const values = form.watch();
  const plan = planRun(toPlanInput(values), catalog);

  const submit = form.handleSubmit((body) =>
    create.mutate(body, {
      onSuccess: onCreated,
      onError: (error) => {
        if (!isApiError(error) || error.code !== 'validation_failed') return;
        for (const issue of serverIssues(error.details, form.getValues())) {
          form.setError(issue.path as keyof RunFormValues, { type: 'server', message: issue.message });
        }
      },
    }),
  );

  const sideField = (side: 'training' | 'heldOut') => {
    const by = side === 'training' ? values.trainingBy : values.heldOutBy;
    const setName = side === 'training' ? 'trainingSetId' : 'heldOutSetId';
    const idsName = side === 'training' ? 'trainingImageIds' : 'heldOutImageIds';
    const label = side === 'training' ? 'Training images' : 'Held-out images';
    const error = errors[setName]?.message ?? errors[idsName]?.message;
    const errorId = `run-${side}-error`;
    return (
      <div className="flex flex-col gap-3">
        <ChoiceGroup
          legend={label}
          name={`${side}By`}
          value={by}
          onChange={(value) => form.setValue(side === 'training' ? 'trainingBy' : 'heldOutBy', value, { shouldValidate: form.formState.isSubmitted })}
          options={[
            { value: 'set', label: 'A whole set' },
            { value: 'images', label: 'Pick images' },
          ]}
        />
        {by === 'set' ? (
          <SelectField
            label={side === 'training' ? 'Training set' : 'Held-out set'}
            error={error}
            {...form.register(setName, { setValueAs: (v: unknown) => (v === '' || v === null || v === undefined ? null : Number(v)) })}
          >
            <option value="">Choose a set…</option>
            {sets.map((set) => (
              <option key={set.id} value={set.id}>
                {setLabel(set)}
              </option>
            ))}
          </SelectField>
        ) : (
          <>
            <ImagePicker
              label={`Chosen ${label.toLowerCase()}`}
              sets={sets}
              catalog={catalog}
              value={values[idsName]}
              errorId={error ? errorId : undefined}
              onChange={(ids) => form.setValue(idsName, ids, { shouldValidate: form.formState.isSubmitted })}
            />
            {error && (
              <p id={errorId} className="text-sm text-danger-700">
                {error}
              </p>
            )}
          </>
        )}
      </div>
    );
  };

  const numberField = (name: 'epsilon' | 'maxIterations' | 'maxVectors' | 'seed' | 'stages' | 'mBest' | 'refinementPasses', label: string, hint: string, step = '1') => (
    <TextField label={label} type="number" step={step} inputMode="decimal" hint={hint} error={errors[name]?.message} {...form.register(name, { valueAsNumber: true })} />
  );

  return (
    <form onSubmit={submit} noValidate aria-label="New run" className="grid items-start gap-6 xl:grid-cols-[minmax(0,1fr)_22rem] lg:grid-cols-[minmax(0,1fr)_20rem]">
      <div className="flex min-w-0 flex-col gap-6">
        <Section title="Run">
          <TextField label="Name" autoComplete="off" error={errors.name?.message} {...form.register('name')} />
          <div className="flex flex-col gap-1.5">
            <label htmlFor="run-notes" className="text-sm font-medium text-ink-800">
              Notes
            </label>
            <textarea
              id="run-notes"
              rows={2}
              className="block w-full rounded-md border border-ink-300 bg-surface px-3 py-2 text-base text-ink-900 hover:border-ink-400"
              {...form.register('notes')}
            />
          </div>
        </Section>

        <Section
          title="Images"
          description="One set for both sides is divided by its images' own marks; a set chosen for one side only gives that side all of its images."
        >
          <CautionNote />
          <div className="grid gap-5 md:grid-cols-2">
            {sideField('training')}
            {sideField('heldOut')}
          </div>
        </Section>

        <Section title="Rate planner" description="Start from the rate you must reach: pick a configuration to fill the patch, mean removal and b below.">
          <RatePlanner
            images={plan.training}
            stride={Number.isInteger(values.stride) ? (values.stride as number) : undefined}
            color={values.color}
            maxVectors={values.maxVectors}
            onPick={(row) => {
              const validate = { shouldValidate: form.formState.isSubmitted };
              form.setValue('patch', { ...row.patch }, validate);
              form.setValue('meanBits', row.meanBits, validate);
              form.setValue('bitsMode', 'single', validate);
              form.setValue('bits', row.bits, validate);
              // The planner's residual rows are RESIDUAL_DEFAULT_STAGES stages sharing b; mean removal is a full-search row's.
              form.setValue('structure', row.structure === 'tree' || row.structure === 'residual' ? row.structure : 'full', validate);
              if (row.structure === 'residual') form.setValue('stages', RESIDUAL_DEFAULT_STAGES, validate);
              // The planner's tree rows are balanced trees.
              if (row.structure === 'tree') form.setValue('growth', 'balanced', validate);
            }}
          />
        </Section>

        <Section title="Patch and colour" description="Training cuts each image into w × h patches, one every stride pixels (non-overlapping unless a smaller stride is given); each patch is one vector.">
          <div className="grid gap-4 sm:grid-cols-[8rem_8rem_12rem_1fr] sm:items-start">
            <TextField label="Width (px)" type="number" min={2} max={16} error={errors.patch?.width?.message} {...form.register('patch.width', { valueAsNumber: true })} />
            <TextField label="Height (px)" type="number" min={2} max={16} error={errors.patch?.height?.message} {...form.register('patch.height', { valueAsNumber: true })} />
            <TextField
              label={`${SETTING_LABELS.stride} (px)`}
              type="number"
              min={STRIDE.min}
              max={STRIDE.max}
              placeholder="patch size"
              hint="Blank: the patch size. Smaller overlaps patches and gives more training vectors."
              error={errors.stride?.message}
              {...form.register('stride', { setValueAs: (v: unknown) => (v === '' || v === null || v === undefined ? null : Number(v)) })}
            />
            <div className="flex flex-col gap-1.5">
              <span className="text-sm font-medium text-ink-800" id="patch-presets">
                Common shapes
              </span>
              <div role="group" aria-labelledby="patch-presets" className="flex flex-wrap gap-1.5">
                {patchPresets.map((preset) => (
                  <Button
                    key={`${preset.width}x${preset.height}`}
                    variant="secondary"
                    size="sm"
                    className="num h-10"
                    aria-pressed={values.patch.width === preset.width && values.patch.height === preset.height}
                    onClick={() => form.setValue('patch', { ...preset }, { shouldValidate: form.formState.isSubmitted })}
                  >
                    {preset.width}×{preset.height}
                  </Button>
                ))}
              </div>
            </div>
          </div>
          <div className="grid gap-4 sm:grid-cols-2">
            <ChoiceGroup
              legend="Colour"
              name="color"
              value={values.color}
              onChange={(value) => form.setValue('color', value)}
              options={[
                { value: 'luma', label: 'Luma', note: '1 channel' },
                { value: 'rgb', label: 'RGB', note: '3 channels per pixel' },
              ]}
            />
            <SelectField
              label="Mean removal"
              hint="With m bits, each block's mean is coded apart and removed before quantising."
              error={errors.meanBits?.message}
              {...form.register('meanBits', { valueAsNumber: true })}
            >
              <option value={0}>None (m = 0)</option>
              {[1, 2, 3, 4, 5, 6, 7, 8].map((m) => (
                <option key={m} value={m}>
                  {`m = ${m} mean bits`}
                </option>
              ))}
            </SelectField>
          </div>
        </Section>

        <Section title="Bit budget" description="b index bits per block: 2^b codewords.">
          <BitBudgetField form={form} />
        </Section>

        <Section title="Structure" description="How the codebook is searched: every codeword, down a binary tree, or stage by stage.">
          <SelectField label="Structure" error={errors.structure?.message} {...form.register('structure')}>
            {RUN_STRUCTURES.map((k) => (
              <option key={k} value={k}>
                {RUN_STRUCTURE_LABELS[k]}
              </option>
            ))}
          </SelectField>
          {values.structure === 'tree' && (
            <SelectField label="Growth" error={errors.growth?.message} {...form.register('growth')}>
              {TREE_GROWTHS.map((g) => (
                <option key={g} value={g}>
                  {TREE_GROWTH_LABELS[g]}
                </option>
              ))}
            </SelectField>
          )}
          {values.structure === 'residual' && (
            <div className="grid gap-4 sm:grid-cols-3">
              {numberField('stages', 'Stages', `${STAGES.min}..${STAGES.max}, sharing b bits (earlier stages take the extra bit).`)}
              {numberField('mBest', 'M (M-best search)', `${M_BEST.min}..${M_BEST.max}; 1 is greedy.`)}
              {numberField('refinementPasses', 'Refinement passes', `${REFINEMENT_PASSES.min}..${REFINEMENT_PASSES.max} joint passes after the stages.`)}
            </div>
          )}
          <StructureSummary
            structure={values.structure}
            growth={values.growth}
            bits={values.bitsMode === 'single' ? values.bits : values.bitsTo}
            stages={values.stages}
            mBest={values.mBest}
            dimension={plan.dimension}
            pixelsPerBlock={values.patch.width * values.patch.height}
          />
        </Section>

        <Section title="Training" description="Generalised Lloyd iterations until the relative drop in distortion is below ε.">
          <SelectField label={SETTING_LABELS.init} error={errors.init?.message} {...form.register('init')}>
            {INIT_METHODS.map((m) => (
              <option key={m} value={m}>{`${INIT_LABELS[m]} (${INIT_HINTS[m]})`}</option>
            ))}
          </SelectField>
          <div className="grid gap-4 sm:grid-cols-2 xl:grid-cols-4">
            {numberField('epsilon', SETTING_LABELS.epsilon, `Above ${EPSILON.min}, at most ${EPSILON.runMax}.`, 'any')}
            {numberField('maxIterations', SETTING_LABELS.maxIterations, 'Per codebook size.')}
            {numberField('maxVectors', SETTING_LABELS.maxVectors, 'Training vectors at most.')}
            {numberField('seed', SETTING_LABELS.seed, 'Same seed, same codebook.')}
          </div>
          <TextField
            label="Entropy-constrained (λ list)"
            autoComplete="off"
            placeholder="e.g. 50,200,800 or 10..1000:5"
            hint={`Optional. One entropy-constrained codebook per λ (${LAMBDA.min}..${LAMBDA.max}, at most ${MAX_LAMBDAS}), each trained from the largest codebook above; a larger λ keeps fewer codewords and codes their indices with a Huffman code.`}
            error={errors.lambdas?.message}
            {...form.register('lambdas')}
          />
        </Section>
      </div>

      <aside className="flex flex-col gap-4 rounded-lg border border-ink-200 bg-surface px-5 py-4 shadow-card lg:sticky lg:top-4">
        <RunSummary plan={plan} patch={values.patch} meanBits={Number.isFinite(values.meanBits) ? values.meanBits : 0} stride={Number.isInteger(values.stride) ? values.stride : null} />
        {create.isError && (
          <Alert tone="error" title="The run was not started">
            {messageOf(create.error)}
          </Alert>
        )}
        {Object.keys(errors).length > 0 && !create.isError && (
          <Alert tone="error">
            {plural(Object.keys(errors).length, 'field needs', 'fields need')} attention before the run can start.
          </Alert>
        )}
        <Button type="submit" pending={create.isPending} className="w-full">
          {plan.sizes.length > 1 ? `Start run · ${plan.sizes.length} codebooks` : 'Start run'}
        </Button>
      </aside>
    </form>
  );
}
