import type { QueryClient } from '@tanstack/react-query';
import { createBrowserRouter, type LoaderFunctionArgs, type RouteObject } from 'react-router-dom';
import { paths } from '../config/routes';
import { RootLayout } from './routes/root-layout';
import { PageError } from './routes/route-error';
import { AppLoading } from './routes/app-loading';

type RouteModule = {
  Component: React.ComponentType;
  ErrorBoundary?: React.ComponentType;
  /** Loaders receive the app's QueryClient so they prime the same cache the page reads. */
  clientLoader?: (queryClient: QueryClient) => (args: LoaderFunctionArgs) => unknown;
};

/** Each page is its own chunk; its loader and component arrive together. */
function page(queryClient: QueryClient, load: () => Promise<RouteModule>): Pick<RouteObject, 'lazy'> {
  return {
    lazy: async () => {
      const { clientLoader, Component, ErrorBoundary } = await load();
      return {
        Component,
        ErrorBoundary: ErrorBoundary ?? PageError,
        loader: clientLoader?.(queryClient),
      };
    },
  };
}

export function createRoutes(queryClient: QueryClient): RouteObject[] {
  return [
    {
      id: 'root',
      Component: RootLayout,
      ErrorBoundary: PageError,
      // Shown while the first page's chunk and loader data arrive.
      HydrateFallback: AppLoading,
      children: [
        { path: paths.signIn, ...page(queryClient, () => import('./routes/sign-in')) },
        { path: paths.signUp, ...page(queryClient, () => import('./routes/sign-up')) },
        { path: paths.signUpFinish, ...page(queryClient, () => import('./routes/sign-up-finish')) },
        { path: paths.accountPassword, ...page(queryClient, () => import('./routes/account-password')) },
        { path: paths.forgotPassword, ...page(queryClient, () => import('./routes/forgot-password')) },
        { path: paths.resetPassword, ...page(queryClient, () => import('./routes/reset-password')) },
        { path: paths.invitation, ...page(queryClient, () => import('./routes/accept-invitation')) },
        { index: true, ...page(queryClient, () => import('./routes/home')) },
        {
          path: paths.team,
          ...page(queryClient, () => import('./routes/team-layout')),
          children: [
            { index: true, ...page(queryClient, () => import('./routes/team-home')) },
            { path: paths.teamMembers, ...page(queryClient, () => import('./routes/team-members')) },
            { path: paths.teamOutbox, ...page(queryClient, () => import('./routes/team-outbox')) },
            { path: paths.teamWorkers, ...page(queryClient, () => import('./routes/team-workers')) },
            { path: paths.teamImageSets, ...page(queryClient, () => import('./routes/team-image-sets')) },
            { path: paths.teamImageSet, ...page(queryClient, () => import('./routes/team-image-set')) },
            { path: paths.teamNewRun, ...page(queryClient, () => import('./routes/team-new-run')) },
            { path: paths.teamImportCodebook, ...page(queryClient, () => import('./routes/team-import-codebook')) },
            { path: paths.teamRuns, ...page(queryClient, () => import('./routes/team-runs')) },
            { path: paths.teamRun, ...page(queryClient, () => import('./routes/team-run')) },
            { path: paths.teamCodebooks, ...page(queryClient, () => import('./routes/team-codebooks')) },
            { path: paths.teamCodebook, ...page(queryClient, () => import('./routes/team-codebook')) },
            { path: paths.teamReleases, ...page(queryClient, () => import('./routes/team-releases')) },
            { path: paths.teamRelease, ...page(queryClient, () => import('./routes/team-release')) },
            { path: paths.teamReleaseReport, ...page(queryClient, () => import('./routes/team-release-report')) },
            { path: paths.teamActivity, ...page(queryClient, () => import('./routes/team-activity')) },
            { path: paths.teamCompare, ...page(queryClient, () => import('./routes/team-compare')) },
            { path: paths.teamEvaluations, ...page(queryClient, () => import('./routes/team-evaluations')) },
            { path: paths.teamEvaluation, ...page(queryClient, () => import('./routes/team-evaluation')) },
            { path: paths.teamApiReference, ...page(queryClient, () => import('./routes/team-api-reference')) },
          ],
        },
        { path: '*', ...page(queryClient, () => import('./routes/not-found')) },
      ],
    },
  ];
}

export function createAppRouter(queryClient: QueryClient) {
  return createBrowserRouter(createRoutes(queryClient));
}
