/**
 * One-time tokens travel in URL paths (the API's /api/invitations/:token and /api/auth/signup/:token, the client's
 * /invite/:token, /sign-up/:token and /reset-password/:token pages); an access log line must not turn into a
 * working link for whoever reads it.
 */
const tokenInPath = /^(\/api\/invitations\/|\/api\/auth\/signup\/(?!complete(?:[/?#]|$))|\/invite\/|\/sign-up\/|\/reset-password\/)[^/?#]+/;

export function maskTokensInUrl(url: string | undefined): string | undefined {
  return url === undefined ? url : url.replace(tokenInPath, '$1[redacted]');
}
