import { describe, expect, it } from 'vitest';
import { RUN_STATE_LABELS } from '../../../server/contracts';
import { jobEndedMail } from '../../../server/mail/templates';

const link = 'http://127.0.0.1:8420/teams/3/runs/9';

describe('the job notice', () => {
  it('names a finished training by the run state label the studio shows, in subject, text and HTML', () => {
    const mail = jobEndedMail({ job: { id: 41, kind: 'train' }, state: 'succeeded', runName: 'Sweep 4x4 luma', error: null, link });
    expect(mail.subject).toBe(`Training ${RUN_STATE_LABELS.succeeded}: Sweep 4x4 luma`);
    expect(mail.text).toContain(`Training job #41 of the run "Sweep 4x4 luma": ${RUN_STATE_LABELS.succeeded}.`);
    expect(mail.html).toContain(`: ${RUN_STATE_LABELS.succeeded}.</p>`);
    expect(mail.text).toContain(link);
  });

  it('names a failed evaluation by its label and gives the reason', () => {
    const mail = jobEndedMail({ job: { id: 7, kind: 'evaluate' }, state: 'failed', runName: null, error: 'the codebook was deleted', link });
    expect(mail.subject).toBe(`Evaluation ${RUN_STATE_LABELS.failed}`);
    expect(mail.text).toContain(`Evaluation job #7: ${RUN_STATE_LABELS.failed}.\nReason: the codebook was deleted`);
  });

  it('uses no other word for a state than its label', () => {
    const texts = (['succeeded', 'failed'] as const).flatMap((state) => {
      const m = jobEndedMail({ job: { id: 1, kind: 'train' }, state, runName: 'r', error: null, link });
      return [m.subject, m.text, m.html];
    });
    for (const t of texts) expect(t).not.toMatch(/\b(finished|succeeded|done|completed)\b/);
  });

  it('escapes a run name in the HTML', () => {
    const mail = jobEndedMail({ job: { id: 2, kind: 'train' }, state: 'succeeded', runName: '<b>"x"</b>', error: null, link });
    expect(mail.html).toContain('&lt;b&gt;&quot;x&quot;&lt;/b&gt;');
    expect(mail.html).not.toContain('<b>');
  });
});
