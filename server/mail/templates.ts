import { RUN_STATE_LABELS, type JobKind } from '../contracts';

export interface MailContent {
  subject: string;
  text: string;
  html: string;
}

const escapeHtml = (s: string) =>
  s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);

function layout(paragraphs: string[], link: { href: string; label: string }, after: string): string {
  const body = paragraphs.map((p) => `<p>${escapeHtml(p)}</p>`).join('\n');
  return `<!doctype html>
<html><body style="font-family: sans-serif; line-height: 1.5; color: #1b2430">
${body}
<p><a href="${escapeHtml(link.href)}">${escapeHtml(link.label)}</a></p>
<p style="color:#5b6675; font-size: 0.9em">${escapeHtml(after)}</p>
</body></html>`;
}

export function invitationMail(input: {
  teamName: string;
  inviterName: string;
  role: string;
  link: string;
  expiresAt: Date;
}): MailContent {
  const intro = `${input.inviterName} invited you to join the team "${input.teamName}" on Cellwright as ${input.role === 'admin' ? 'an' : 'a'} ${input.role}.`;
  const expiry = `The link works once and expires on ${input.expiresAt.toISOString().slice(0, 16).replace('T', ' ')} UTC.`;
  const ignore = 'If you did not expect this invitation, you can ignore this message.';
  return {
    subject: `You are invited to ${input.teamName} on Cellwright`,
    text: `${intro}\n\nAccept the invitation:\n${input.link}\n\n${expiry}\n${ignore}\n`,
    html: layout([intro], { href: input.link, label: 'Accept the invitation' }, `${expiry} ${ignore}`),
  };
}

export function passwordResetMail(input: { name: string; link: string; expiresAt: Date }): MailContent {
  const intro = `Hello ${input.name}, someone asked to reset the password of your Cellwright account.`;
  const expiry = 'The link works once and expires in one hour.';
  const ignore = 'If it was not you, ignore this message: your password stays as it is.';
  return {
    subject: 'Reset your Cellwright password',
    text: `${intro}\n\nChoose a new password:\n${input.link}\n\n${expiry}\n${ignore}\n`,
    html: layout([intro], { href: input.link, label: 'Choose a new password' }, `${expiry} ${ignore}`),
  };
}

export function signupLinkMail(input: { link: string; expiresAt: Date }): MailContent {
  const intro = 'Someone (we hope you) asked to create a Cellwright account with this e-mail address.';
  const expiry = `The link works once and expires on ${input.expiresAt.toISOString().slice(0, 16).replace('T', ' ')} UTC.`;
  const ignore = 'If it was not you, ignore this message: no account is made without the link.';
  return {
    subject: 'Finish creating your Cellwright account',
    text: `${intro}\n\nChoose your name, password and team:\n${input.link}\n\n${expiry}\n${ignore}\n`,
    html: layout([intro], { href: input.link, label: 'Finish creating your account' }, `${expiry} ${ignore}`),
  };
}

/** The answer to a sign-up for an address that already has an account: the owner learns of it, nobody else does. */
export function signupExistingMail(input: { name: string; signInLink: string; resetLink: string }): MailContent {
  const intro = `Hello ${input.name}, someone tried to create a new Cellwright account with this e-mail address, which already has one.`;
  const help = `Sign in at ${input.signInLink}. Forgot your password? Ask for a reset link at ${input.resetLink}.`;
  const ignore = 'If it was not you, you can ignore this message: nothing about your account changed.';
  return {
    subject: 'You already have a Cellwright account',
    text: `${intro}\n\n${help}\n\n${ignore}\n`,
    html: layout([intro, help], { href: input.signInLink, label: 'Sign in' }, ignore),
  };
}

/** What a person calls a job of each kind, in the job notices. */
const JOB_KIND_NAMES: Record<JobKind, string> = { train: 'Training', evaluate: 'Evaluation', anomaly: 'Anomaly map', denoise: 'Denoising' };

/**
 * The notice a job's creator gets when it ends by itself (Finished or Failed; a cancellation needs none, the person
 * did it). States are named by RUN_STATE_LABELS, as the studio's badges and the command line name them.
 */
export function jobEndedMail(input: {
  job: { id: number; kind: JobKind };
  state: 'succeeded' | 'failed';
  runName: string | null;
  error: string | null;
  link: string;
}): MailContent {
  const what = JOB_KIND_NAMES[input.job.kind];
  const label = RUN_STATE_LABELS[input.state];
  const subject = `${what} ${label}${input.runName ? `: ${input.runName}` : ''}`;
  const lines = [`${what} job #${input.job.id}${input.runName ? ` of the run "${input.runName}"` : ''}: ${label}.`];
  if (input.error) lines.push(`Reason: ${input.error}`);
  const why = 'You receive this notice because you started the job.';
  return {
    subject,
    text: `${lines.join('\n')}\n\nOpen it in Cellwright:\n${input.link}\n\n${why}\n`,
    html: layout(lines, { href: input.link, label: 'Open it in Cellwright' }, why),
  };
}
