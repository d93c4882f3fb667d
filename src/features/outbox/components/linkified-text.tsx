import { Fragment } from 'react';

// Only http(s) links become anchors; anything else in a message stays inert text.
const urlPattern = /https?:\/\/[^\s<>"')\]]+/g;

/** Plain-text e-mail body with its links clickable. The HTML part is never rendered. */
export function LinkifiedText({ text }: { text: string }) {
  const parts: Array<{ text: string; link: boolean }> = [];
  let last = 0;
  for (const match of text.matchAll(urlPattern)) {
    const start = match.index ?? 0;
    // A sentence-ending full stop or comma belongs to the prose, not the link.
    const url = match[0].replace(/[.,;:!?]+$/, '');
    if (start > last) parts.push({ text: text.slice(last, start), link: false });
    parts.push({ text: url, link: true });
    last = start + url.length;
  }
  if (last < text.length) parts.push({ text: text.slice(last), link: false });

  return (
    <>
      {parts.map((part, index) =>
        part.link ? (
          <a key={index} href={part.text} className="break-all text-ember-700 underline hover:text-ember-800">
            {part.text}
          </a>
        ) : (
          <Fragment key={index}>{part.text}</Fragment>
        ),
      )}
    </>
  );
}
