import type { JobState } from '../contracts';
import type { Database } from '../db';
import { jobEndedMail } from '../mail/templates';
import type { MailOutbox } from '../services/mail-queue';
import type { Job } from './queue';

/**
 * Tells a job's creator that it finished or failed; cancellation needs no mail, the person did it. The notice is
 * queued (the team's mail, shown in its Outbox) and delivered by the mail sender, never from the job's slot.
 */
export function createJobNotifier(deps: { db: Database; mail: MailOutbox; publicUrl: string }) {
  return async (job: Job, state: JobState, error: string | null): Promise<void> => {
    if ((state !== 'succeeded' && state !== 'failed') || job.createdBy === null) return;
    // Anomaly maps and denoising are watched in their panel while they run (seconds): no mail for them.
    if (job.kind === 'anomaly' || job.kind === 'denoise') return;
    const user = await deps.db.repos.users.findById(job.createdBy);
    if (!user) return;
    const run = job.runId ? await deps.db.repos.runs.findById(job.runId) : null;
    const link = run ? `${deps.publicUrl}/teams/${job.teamId}/runs/${run.id}` : `${deps.publicUrl}/teams/${job.teamId}/codebooks`;
    await deps.mail.enqueue(deps.db.repos, { teamId: job.teamId, kind: 'job_finished', to: user.email, content: jobEndedMail({ job: { id: job.id, kind: job.kind }, state, runName: run?.name ?? null, error, link }) });
  };
}
