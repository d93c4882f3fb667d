import type { UseFormReturn } from 'react-hook-form';
import type { CreateRunBody } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';
import { groupDigits } from '../format';
import type { RunFormValues } from '../run-form-schema';
import { ChoiceGroup } from './choice-group';

const maxBits = 14;
const scale = Array.from({ length: maxBits + 1 }, (_, b) => b);

function FieldError({ id, message }: { id: string; message?: string }) {
  if (!message) return null;
  return (
    <p id={id} className="flex items-start gap-1.5 text-sm text-danger-700">
      <span aria-hidden="true" className="mt-[0.4rem] inline-block size-1.5 shrink-0 rounded-full bg-danger-600" />
      {message}
    </p>
  );
}

function Slider({ form, name, label }: { form: UseFormReturn<RunFormValues, unknown, CreateRunBody>; name: 'bits' | 'bitsFrom' | 'bitsTo'; label: string }) {
  const value = form.watch(name);
  const error = form.formState.errors[name]?.message;
  const errorId = `run-${name}-error`;
  return (
    <div className="flex flex-col gap-1">
      <div className="flex items-baseline justify-between">
        <label htmlFor={`run-${name}`} className="text-sm font-medium text-ink-800">
          {label}
        </label>
        <span className="num text-sm text-ink-950" aria-hidden="true">
          b = {Number.isFinite(value) ? value : '—'}
          {Number.isFinite(value) && <span className="ml-1.5 text-ink-600">({groupDigits(2 ** value)} codewords)</span>}
        </span>
      </div>
      <input
        id={`run-${name}`}
        type="range"
        min={0}
        max={maxBits}
        step={1}
        aria-invalid={error ? true : undefined}
        aria-describedby={error ? errorId : undefined}
        aria-valuetext={Number.isFinite(value) ? `b = ${value}, ${2 ** value} codewords` : undefined}
        className="w-full accent-ember-600"
        {...form.register(name, {
          valueAsNumber: true,
          // The two ends of a sweep push each other along instead of crossing.
          onChange: (event: { target: { value: string } }) => {
            const next = Number(event.target.value);
            if (name === 'bitsFrom' && next > form.getValues('bitsTo')) form.setValue('bitsTo', next, { shouldValidate: form.formState.isSubmitted });
            if (name === 'bitsTo' && next < form.getValues('bitsFrom')) form.setValue('bitsFrom', next, { shouldValidate: form.formState.isSubmitted });
          },
        })}
      />
      <FieldError id={errorId} message={error} />
    </div>
  );
}

/**
 * The bit budget b (0..14): one value trains one codebook of 2^b codewords; a range sweeps b and trains one
 * codebook per value, which is what a rate–distortion curve needs.
 */
export function BitBudgetField({ form }: { form: UseFormReturn<RunFormValues, unknown, CreateRunBody> }) {
  const mode = form.watch('bitsMode');
  const single = form.watch('bits');
  const from = form.watch('bitsFrom');
  const to = form.watch('bitsTo');
  const inRange = (b: number) => (mode === 'single' ? b === single : b >= from && b <= to);

  return (
    <div className="flex flex-col gap-4">
      <ChoiceGroup
        legend="Train for"
        name="bitsMode"
        value={mode}
        onChange={(value) => form.setValue('bitsMode', value, { shouldValidate: form.formState.isSubmitted })}
        options={[
          { value: 'single', label: 'One value', note: 'one codebook' },
          { value: 'range', label: 'A range', note: 'a codebook per b, for a curve' },
        ]}
      />
      <div aria-hidden="true" className="grid grid-cols-15 gap-0.5">
        {scale.map((b) => (
          <div key={b} className="flex flex-col items-center gap-1">
            <div className={cx('h-5 w-full rounded-sm', inRange(b) ? 'bg-ember-500' : 'bg-ink-100')} style={{ opacity: inRange(b) ? 0.45 + (0.55 * b) / maxBits : 1 }} />
            <span className={cx('num text-[0.6875rem]', inRange(b) ? 'text-ink-950' : 'text-ink-500')}>{b}</span>
          </div>
        ))}
      </div>
      {mode === 'single' ? (
        <Slider form={form} name="bits" label="Bits per block, b" />
      ) : (
        <div className="grid gap-4 sm:grid-cols-2">
          <Slider form={form} name="bitsFrom" label="Lowest b" />
          <Slider form={form} name="bitsTo" label="Highest b" />
        </div>
      )}
    </div>
  );
}
