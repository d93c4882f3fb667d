import { paths } from '../config/routes';

const publicPrefixes = [paths.signIn, paths.signUp, paths.forgotPassword, '/reset-password/', '/invite/'];

export function isPublicPath(pathname: string): boolean {
  return publicPrefixes.some((prefix) => pathname === prefix || pathname.startsWith(prefix.endsWith('/') ? prefix : `${prefix}/`));
}

/**
 * Accepts only a path on this origin, so a crafted `?returnTo=https://elsewhere` link cannot turn
 * the sign-in page into an open redirect; public pages are not worth returning to, except an invitation,
 * which an existing account accepts once signed in.
 */
export function safeReturnTo(value: string | null | undefined): string | null {
  if (!value || !value.startsWith('/') || value.startsWith('//') || value.includes('\\')) return null;
  try {
    const url = new URL(value, 'http://cellwright.invalid');
    if (url.origin !== 'http://cellwright.invalid') return null;
    if (isPublicPath(url.pathname) && !url.pathname.startsWith('/invite/')) return null;
    return `${url.pathname}${url.search}${url.hash}`;
  } catch {
    return null;
  }
}

const lastTeamKey = 'cellwright.last-team';

/** The team a member worked in last, so signing in lands there rather than in the first team listed. */
export function rememberTeam(teamId: number): void {
  try {
    window.localStorage.setItem(lastTeamKey, String(teamId));
  } catch {
    // Storage can be disabled by policy; landing in the first team is an acceptable fallback.
  }
}

export function lastTeam(): number | null {
  try {
    const value = Number(window.localStorage.getItem(lastTeamKey));
    return Number.isInteger(value) && value > 0 ? value : null;
  } catch {
    return null;
  }
}

export function initialsOf(name: string): string {
  const parts = name.trim().split(/\s+/).filter(Boolean);
  const letters = parts.length > 1 ? [parts[0][0], parts[parts.length - 1][0]] : [parts[0]?.[0] ?? '?'];
  return letters.join('').toUpperCase();
}
