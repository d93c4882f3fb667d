import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import { z } from 'zod';
import { SEED, splitImageSetBody } from '../../../../server/contracts';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useSplitImageSet } from '../api/split-image-set';

// The form speaks percent; the contract's fraction bounds (0 < f < 1) still decide what may be sent.
const splitFormSchema = z
  .object({
    percent: z.coerce.number<string>({ error: 'Enter a percentage' }).min(1, 'At least 1 %').max(99, 'At most 99 %'),
    seed: z.coerce.number<string>({ error: 'Enter a whole number' }).int('Enter a whole number').min(SEED.min, `Seed must be ${SEED.min} or more`).max(SEED.max, `Seed must be at most ${SEED.max}`),
  })
  .transform((v) => splitImageSetBody.parse({ heldOutFraction: v.percent / 100, seed: v.seed }));

/**
 * Splits the whole set by a seeded shuffle: round(f·n) images become held-out, the rest training. The same seed
 * and images always give the same split, so a split can be reproduced from its two numbers.
 */
export function SplitForm({ teamId, setId, imageCount }: { teamId: number; setId: number; imageCount: number }) {
  const split = useSplitImageSet(teamId, setId);
  const form = useForm<z.input<typeof splitFormSchema>, unknown, z.output<typeof splitFormSchema>>({
    resolver: zodResolver(splitFormSchema),
    defaultValues: { percent: '20', seed: '1' },
  });
  const { errors } = form.formState;
  const percent = Number(form.watch('percent'));
  const heldOut = Number.isFinite(percent) ? Math.round((percent / 100) * imageCount) : 0;

  return (
    <form
      aria-label="Split into training and held-out"
      noValidate
      onSubmit={form.handleSubmit((body) => split.mutate(body))}
      className="flex flex-col gap-3"
    >
      <div className="grid grid-cols-2 gap-3">
        <TextField label="Held-out share (%)" inputMode="decimal" error={errors.percent?.message} {...form.register('percent')} />
        <TextField label="Seed" inputMode="numeric" error={errors.seed?.message} {...form.register('seed')} />
      </div>
      <p className="text-sm text-ink-600">
        <span className="num text-ink-900">{heldOut}</span> of <span className="num text-ink-900">{imageCount}</span> images become held-out;
        every earlier marking in this set is replaced.
      </p>
      {split.isError && <Alert tone="error">{messageOf(split.error)}</Alert>}
      {split.isSuccess && (
        <Alert tone="success">
          Split done: {split.data.imageSet.counts.training} training, {split.data.imageSet.counts.heldOut} held-out.
        </Alert>
      )}
      <div>
        <Button type="submit" variant="secondary" pending={split.isPending} disabled={imageCount < 2}>
          Split set
        </Button>
      </div>
    </form>
  );
}
