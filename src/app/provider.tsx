import { QueryClientProvider } from '@tanstack/react-query';
import { RouterProvider } from 'react-router-dom';
import { href } from '../config/routes';
import { isPublicPath } from '../lib/auth';
import { createQueryClient } from '../lib/query-client';
import { createAppRouter } from './router';

/** Builds the one QueryClient and router of the running app and ties a 401 anywhere to sign-in. */
export function createApp() {
  // The router needs the query client and the client's 401 handler needs the router: tie them through a holder.
  const holder: { router?: ReturnType<typeof createAppRouter> } = {};
  const queryClient = createQueryClient({
    onUnauthenticated: () => {
      // While loaders run (first load or a navigation) the session guard redirects, with the page being opened as returnTo.
      const { router } = holder;
      if (!router || !router.state.initialized || router.state.navigation.state !== 'idle') return;
      const { pathname, search } = router.state.location;
      if (isPublicPath(pathname)) return;
      queryClient.removeQueries();
      void router.navigate(href.signIn(`${pathname}${search}`), { replace: true });
    },
  });
  const appRouter = createAppRouter(queryClient);
  holder.router = appRouter;

  function App() {
    return (
      <QueryClientProvider client={queryClient}>
        <RouterProvider router={appRouter} />
      </QueryClientProvider>
    );
  }
  return { App, queryClient, router: appRouter };
}
