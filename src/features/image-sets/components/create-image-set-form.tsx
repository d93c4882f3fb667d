import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import { z } from 'zod';
import type { ImageSet } from '../../../../server/contracts';
import { isApiError, messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useCreateImageSet } from '../api/create-image-set';

// Same bounds as the contract's createImageSetBody, with messages a person reads.
const createSetSchema = z.object({
  name: z.string().trim().min(1, 'Give the set a name').max(120, 'At most 120 characters'),
  description: z.string().trim().max(2000, 'At most 2000 characters'),
});

export function CreateImageSetForm({ teamId, onCreated }: { teamId: number; onCreated: (set: ImageSet) => void }) {
  const create = useCreateImageSet(teamId);
  const form = useForm<z.input<typeof createSetSchema>, unknown, z.output<typeof createSetSchema>>({
    resolver: zodResolver(createSetSchema),
    defaultValues: { name: '', description: '' },
  });
  const { errors } = form.formState;
  const nameTaken = isApiError(create.error) && create.error.status === 409;

  return (
    <form
      aria-label="New image set"
      noValidate
      onSubmit={form.handleSubmit((values) =>
        create.mutate({ name: values.name, ...(values.description ? { description: values.description } : {}) }, { onSuccess: onCreated }),
      )}
      className="flex flex-col gap-4"
    >
      {create.isError && !nameTaken && <Alert tone="error">{messageOf(create.error)}</Alert>}
      <div className="grid gap-4 md:grid-cols-[16rem_1fr_auto] md:items-start">
        <TextField label="Name" autoComplete="off" error={errors.name?.message ?? (nameTaken ? messageOf(create.error) : undefined)} {...form.register('name')} />
        <TextField
          label="Description"
          autoComplete="off"
          hint="Where the images come from and what they show."
          error={errors.description?.message}
          {...form.register('description')}
        />
        <Button type="submit" pending={create.isPending} className="md:mt-[1.625rem]">
          Create set
        </Button>
      </div>
    </form>
  );
}
