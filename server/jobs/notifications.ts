import type { JobState } from '../contracts';
import type { Database } from '../db';
import type { MailContent } from '../mail/templates';
import type { MailOutbox } from '../services/mail-queue';
import type { Job } from './queue';

const escapeHtml = (s: string) =>
  s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);

const what = (job: Job) => (job.kind === 'train' ? 'Training' : 'Evaluation');

export function jobFinishedMail(input: { job: Job; state: 'succeeded' | 'failed'; runName: string | null; error: string | null; link: string }): MailContent {
  const subject = `${what(input.job)} ${input.state === 'succeeded' ? 'finished' : 'failed'}${input.runName ? `: ${input.runName}` : ''}`;
  const lines = [
    input.state === 'succeeded'
      ? `${what(input.job)} job #${input.job.id}${input.runName ? ` of the run "${input.runName}"` : ''} finished.`
      : `${what(input.job)} job #${input.job.id}${input.runName ? ` of the run "${input.runName}"` : ''} failed.`,
  ];
  if (input.error) lines.push(`Reason: ${input.error}`);
  const text = `${lines.join('\n')}\n\nOpen it in Cellwright:\n${input.link}\n`;
  const html = `<!doctype html>
<html><body style="font-family: sans-serif; line-height: 1.5; color: #1b2430">
${lines.map((l) => `<p>${escapeHtml(l)}</p>`).join('\n')}
<p><a href="${escapeHtml(input.link)}">Open it in Cellwright</a></p>
</body></html>`;
  return { subject, text, html };
}

/**
 * Tells a job's creator that it finished or failed; cancellation needs no mail, the person did it. The notice is
 * queued (the team's mail, shown in its Outbox) and delivered by the mail sender, never from the job's slot.
 */
export function createJobNotifier(deps: { db: Database; mail: MailOutbox; publicUrl: string }) {
  return async (job: Job, state: JobState, error: string | null): Promise<void> => {
    if ((state !== 'succeeded' && state !== 'failed') || job.createdBy === null) return;
    const user = await deps.db.repos.users.findById(job.createdBy);
    if (!user) return;
    const run = job.runId ? await deps.db.repos.runs.findById(job.runId) : null;
    const link = run ? `${deps.publicUrl}/teams/${job.teamId}/runs/${run.id}` : `${deps.publicUrl}/teams/${job.teamId}/codebooks`;
    await deps.mail.enqueue(deps.db.repos, { teamId: job.teamId, kind: 'job_finished', to: user.email, content: jobFinishedMail({ job, state, runName: run?.name ?? null, error, link }) });
  };
}
