import { LogoMark } from '../../components/brand/wordmark';
import { Spinner } from '../../components/ui/spinner';

export function AppLoading() {
  return (
    <main id="main" className="flex min-h-dvh items-center justify-center">
      <div role="status" className="flex items-center gap-3 text-sm text-ink-600">
        <LogoMark />
        <Spinner />
        <span>Loading Cellwright…</span>
      </div>
    </main>
  );
}
