import { isRouteErrorResponse, Link, useRevalidator, useRouteError } from 'react-router-dom';
import { href } from '../../config/routes';
import { isApiError } from '../../lib/api-client';
import { buttonClass } from '../../components/ui/button';
import { Button } from '../../components/ui/button';

function describe(error: unknown): { status: number; title: string; message: string } {
  const status = isRouteErrorResponse(error) ? error.status : isApiError(error) ? error.status : 500;
  if (status === 404) {
    return { status, title: 'Not found', message: 'This page does not exist, or it belongs to a team you are not a member of.' };
  }
  if (status === 403) {
    const detail = isRouteErrorResponse(error) && typeof error.data === 'string' ? error.data : null;
    return { status, title: 'Not available to your role', message: detail ? `${detail}.` : 'Your role in this team does not include this page.' };
  }
  if (isApiError(error) && error.status === 0) {
    return { status, title: 'Server unreachable', message: error.message };
  }
  if (isApiError(error) && error.code === 'service_unavailable') {
    return { status, title: 'Service unavailable', message: 'The server is up but its database is not answering. Try again in a moment.' };
  }
  return { status, title: 'Something went wrong', message: error instanceof Error ? error.message : 'An unexpected error stopped this page from loading.' };
}

/** The error element of every route; inside a team it renders within the shell, so navigation stays usable. */
export function RouteError() {
  const error = useRouteError();
  const revalidator = useRevalidator();
  const { status, title, message } = describe(error);
  const retryable = status !== 404 && status !== 403;
  return (
    <div role="alert" className="flex max-w-xl flex-col items-start gap-4 py-10">
      <title>{`${title} · Cellwright`}</title>
      <p className="num text-sm font-medium text-ember-700">{status === 0 ? 'offline' : `error ${status}`}</p>
      <h1 className="text-2xl font-semibold tracking-tight text-ink-950">{title}</h1>
      <p className="text-base text-ink-700">{message}</p>
      <div className="flex gap-2">
        {retryable && (
          <Button variant="secondary" onClick={() => void revalidator.revalidate()} pending={revalidator.state === 'loading'}>
            Try again
          </Button>
        )}
        <Link to={href.home()} className={buttonClass('secondary')}>
          Go to your team
        </Link>
      </div>
    </div>
  );
}

/** For errors outside the signed-in shell: the same message with its own main landmark. */
export function PageError() {
  return (
    <main id="main" className="flex min-h-dvh items-center justify-center px-5">
      <RouteError />
    </main>
  );
}
