import { data } from 'react-router-dom';

/** The release id of a page's URL; anything but a positive whole number is a 404 page. */
export function parseReleaseId(value: string | undefined): number {
  const id = Number(value);
  if (!Number.isInteger(id) || id <= 0) throw data('No such release', { status: 404 });
  return id;
}
