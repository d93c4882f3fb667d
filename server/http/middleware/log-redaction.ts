/**
 * One-time tokens travel in URL paths (the API's /api/invitations/:token and the client's /invite/:token and
 * /reset-password/:token pages); an access log line must not turn into a working link for whoever reads it.
 */
const tokenInPath = /^(\/api\/invitations\/|\/invite\/|\/reset-password\/)[^/?#]+/;

export function maskTokensInUrl(url: string | undefined): string | undefined {
  return url === undefined ? url : url.replace(tokenInPath, '$1[redacted]');
}
