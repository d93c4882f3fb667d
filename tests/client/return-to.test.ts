import { describe, expect, it } from 'vitest';
import { safeReturnTo } from '../../src/lib/auth';

describe('safeReturnTo', () => {
  it('keeps a path on this origin with its query and hash', () => {
    expect(safeReturnTo('/teams/4/members?tab=pending#top')).toBe('/teams/4/members?tab=pending#top');
  });

  it('refuses anything that could leave the origin', () => {
    for (const value of ['https://elsewhere.test/', '//elsewhere.test/x', '/\\elsewhere.test', 'javascript:alert(1)', 'teams/4']) {
      expect(safeReturnTo(value)).toBeNull();
    }
  });

  it('does not return to public pages such as sign-in itself', () => {
    expect(safeReturnTo('/sign-in?returnTo=/teams/1')).toBeNull();
    expect(safeReturnTo('/sign-up/abc')).toBeNull();
    expect(safeReturnTo('/reset-password/abc')).toBeNull();
  });

  it('returns to an invitation, which an existing account accepts once signed in', () => {
    expect(safeReturnTo('/invite/abc_DEF-123')).toBe('/invite/abc_DEF-123');
  });
});
