import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import { z } from 'zod';
import { role } from '../../../../server/contracts';
import { roleDescriptions, roleLabels } from '../../../config/roles';
import { fieldErrorsOf, messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { SelectField, TextField } from '../../../components/ui/field';
import { useCreateInvitation } from '../api/create-invitation';

const inviteSchema = z.object({
  email: z
    .string()
    .trim()
    .toLowerCase()
    .min(1, 'Enter the e-mail address to invite')
    .pipe(z.email('Enter a valid e-mail address, such as name@example.com')),
  role,
});

export function InviteMemberForm({ teamId }: { teamId: number }) {
  const create = useCreateInvitation(teamId);
  const form = useForm<z.input<typeof inviteSchema>, unknown, z.output<typeof inviteSchema>>({
    resolver: zodResolver(inviteSchema),
    defaultValues: { email: '', role: 'engineer' },
  });
  const { errors } = form.formState;
  const serverFields = fieldErrorsOf(create.error);
  const chosenRole = form.watch('role');

  const submit = form.handleSubmit((values) =>
    create.mutate(values, {
      onSuccess: () => form.reset({ email: '', role: values.role }),
    }),
  );

  return (
    <form onSubmit={submit} noValidate aria-label="Invite a member" className="flex flex-col gap-4">
      {create.isError && <Alert tone="error">{messageOf(create.error)}</Alert>}
      {create.isSuccess && (
        <Alert tone="success">
          Invitation sent to {create.data.email}. The link is valid for 7 days.
        </Alert>
      )}
      <div className="grid gap-4 sm:grid-cols-[1fr_12rem_auto] sm:items-start">
        <TextField label="E-mail" type="email" autoComplete="off" inputMode="email" error={errors.email?.message ?? serverFields.email} {...form.register('email')} />
        <SelectField label="Role" error={errors.role?.message} {...form.register('role')}>
          {(['engineer', 'viewer', 'admin'] as const).map((r) => (
            <option key={r} value={r}>
              {roleLabels[r]}
            </option>
          ))}
        </SelectField>
        <Button type="submit" pending={create.isPending} className="sm:mt-[1.625rem]">
          Send invitation
        </Button>
      </div>
      <p className="text-sm text-ink-600">{roleDescriptions[chosenRole]}</p>
    </form>
  );
}
