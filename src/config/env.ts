import { z } from 'zod';

// Checked once at load so a misconfigured build fails on the first screen, not on the first request.
const clientEnv = z.object({
  MODE: z.string(),
  DEV: z.boolean(),
  /** Path prefix of the HTTP API on the page's own origin (the session cookie is same-origin only). */
  VITE_API_BASE_PATH: z
    .string()
    .regex(/^\/[A-Za-z0-9/_-]*$/, 'must be an absolute path on this origin')
    .default('/api'),
});

const parsed = clientEnv.parse({
  MODE: import.meta.env.MODE,
  DEV: import.meta.env.DEV,
  VITE_API_BASE_PATH: import.meta.env.VITE_API_BASE_PATH,
});

export const env = Object.freeze({
  mode: parsed.MODE,
  dev: parsed.DEV,
  apiBasePath: parsed.VITE_API_BASE_PATH.replace(/\/+$/, ''),
});
