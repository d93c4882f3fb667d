import { describe, expect, it } from 'vitest';
import { maskTokensInUrl } from '../../../server/http/middleware/log-redaction';

describe('maskTokensInUrl', () => {
  it('masks the one-time token of every link kind, in the API and in the client pages', () => {
    const token = 'AbC_dEf-0123456789abcdefghijklmnopqrstuvwxy';
    for (const prefix of ['/api/invitations/', '/api/auth/signup/', '/invite/', '/sign-up/', '/reset-password/']) {
      const masked = maskTokensInUrl(`${prefix}${token}?x=1`)!;
      expect(masked).toBe(`${prefix}[redacted]?x=1`);
      expect(masked).not.toContain(token);
    }
    expect(maskTokensInUrl(`/api/invitations/${token}/accept`)).toBe('/api/invitations/[redacted]/accept');
  });

  it('leaves the route that finishes a sign-up, and paths without tokens, readable', () => {
    expect(maskTokensInUrl('/api/auth/signup/complete')).toBe('/api/auth/signup/complete');
    expect(maskTokensInUrl('/api/auth/signup')).toBe('/api/auth/signup');
    expect(maskTokensInUrl('/api/teams/3/outbox')).toBe('/api/teams/3/outbox');
  });
});
