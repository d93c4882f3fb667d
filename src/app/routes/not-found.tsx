import { Link } from 'react-router-dom';
import { href } from '../../config/routes';
import { buttonClass } from '../../components/ui/button';

export function Component() {
  return (
    <main id="main" className="mx-auto flex min-h-dvh max-w-xl flex-col items-start justify-center gap-4 px-5">
      <title>Not found · Cellwright</title>
      <p className="num text-sm font-medium text-ember-700">error 404</p>
      <h1 className="text-2xl font-semibold tracking-tight text-ink-950">Not found</h1>
      <p className="text-base text-ink-700">There is no page at this address.</p>
      <Link to={href.home()} className={buttonClass('secondary')}>
        Go to your team
      </Link>
    </main>
  );
}
