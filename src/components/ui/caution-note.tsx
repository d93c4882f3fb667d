import { cx } from '../../lib/cx';

/** Wording agreed for every screen that can lead to a frozen codebook; keep it verbatim. */
export const cautionText =
  'Lossy codebooks are not validated for diagnostic medical or safety-critical inspection imagery; such use needs the applicable regulations and qualified review.';

/** `text` replaces the wording for views with a caution of their own (the codebook-model views carry MODEL_CAUTION). */
export function CautionNote({ variant = 'inline', className, text = cautionText }: { variant?: 'inline' | 'footer'; className?: string; text?: string }) {
  return (
    <p
      className={cx(
        'flex items-start gap-2 text-sm',
        variant === 'footer' ? 'text-ink-600' : 'rounded-md border border-caution-200 bg-caution-50 px-3.5 py-2.5 text-caution-800',
        className,
      )}
    >
      <svg aria-hidden="true" viewBox="0 0 16 16" className="mt-0.5 size-4 shrink-0">
        <path d="M8 1.5 15 14H1L8 1.5Z" fill="none" stroke="currentColor" strokeWidth="1.4" strokeLinejoin="round" />
        <path d="M8 6v3.5" stroke="currentColor" strokeWidth="1.4" strokeLinecap="round" />
        <circle cx="8" cy="11.75" r="0.9" fill="currentColor" />
      </svg>
      <span>
        <span className="font-semibold">Caution: </span>
        {text}
      </span>
    </p>
  );
}
