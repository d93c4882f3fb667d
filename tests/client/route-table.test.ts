import { matchPath } from 'react-router-dom';
import { describe, expect, it } from 'vitest';
import { fillPath, href, paths } from '../../src/config/routes';

describe('the route table', () => {
  it('builds every link from the pattern the router matches', () => {
    const built: Record<keyof typeof paths, string> = {
      signIn: href.signIn(),
      signUp: href.signUp(),
      signUpFinish: href.signUpFinish('tok'),
      accountPassword: href.accountPassword(),
      forgotPassword: href.forgotPassword(),
      resetPassword: href.resetPassword('tok'),
      invitation: href.invitation('tok'),
      home: href.home(),
      team: href.team(3),
      teamMembers: href.teamMembers(3),
      teamOutbox: href.teamOutbox(3),
      teamWorkers: href.teamWorkers(3),
      teamImageSets: href.teamImageSets(3),
      teamImageSet: href.teamImageSet(3, 9),
      teamRuns: href.teamRuns(3),
      teamNewRun: href.teamNewRun(3),
      teamRun: href.teamRun(3, 9),
      teamImportCodebook: href.teamImportCodebook(3),
      teamCodebook: href.teamCodebook(3, 9),
      teamCodebooks: href.teamCodebooks(3),
      teamCompare: href.teamCompare(3),
      teamEvaluations: href.teamEvaluations(3),
      teamEvaluation: href.teamEvaluation(3, 9),
      teamApiReference: href.teamApiReference(3),
      teamReleases: href.teamReleases(3),
      teamRelease: href.teamRelease(3, 9),
      teamReleaseReport: href.teamReleaseReport(3, 9),
      teamActivity: href.teamActivity(3),
    };
    for (const key of Object.keys(paths) as Array<keyof typeof paths>) {
      expect(matchPath({ path: paths[key], end: true }, built[key]), key).not.toBeNull();
    }
  });

  it('fills parameters as single encoded path segments and keeps queries', () => {
    expect(fillPath(paths.teamRun, { teamId: 3, runId: 9 })).toBe('/teams/3/runs/9');
    expect(href.resetPassword('a/b?c')).toBe('/reset-password/a%2Fb%3Fc');
    expect(href.teamNewRun(3, 7)).toBe('/teams/3/runs/new?from=7');
    expect(href.teamCompare(3, [5, 2])).toBe('/teams/3/compare?runs=5,2');
    expect(href.teamActivity(3, { actor: 4, action: 'release.approved' })).toBe('/teams/3/activity?actor=4&action=release.approved');
    expect(href.signIn('/teams/3?x=1', 'a@b.example')).toBe('/sign-in?returnTo=%2Fteams%2F3%3Fx%3D1&email=a%40b.example');
    expect(href.signIn('/')).toBe('/sign-in');
  });
});
