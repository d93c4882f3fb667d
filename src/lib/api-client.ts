import type { z } from 'zod';
import { errorBody, type ErrorCode } from '../../server/contracts';
import { env } from '../config/env';

/** Codes the client itself produces when no API error body is available. */
export type ClientErrorCode = 'network_error' | 'invalid_response';

/**
 * Every failed API call surfaces as one ApiError. `code` comes from the server's
 * `{ error: { code, message, details? } }` body, so screens branch on codes, never on messages.
 * `status` is 0 when the server could not be reached at all.
 */
export class ApiError extends Error {
  override readonly name = 'ApiError';
  readonly status: number;
  readonly code: ErrorCode | ClientErrorCode | (string & {});
  readonly details: unknown;

  constructor(status: number, code: ApiError['code'], message: string, details?: unknown) {
    super(message);
    this.status = status;
    this.code = code;
    this.details = details;
  }

  get isUnauthenticated(): boolean {
    return this.status === 401;
  }

  /** 4xx answers are the server's considered verdict; repeating the request cannot change them. */
  get isClientError(): boolean {
    return this.status >= 400 && this.status < 500;
  }
}

export function isApiError(error: unknown): error is ApiError {
  return error instanceof ApiError;
}

/** Field messages from a `validation_failed` answer, when the server sent them as `{ fields: { name: message } }`. */
export function fieldErrorsOf(error: unknown): Record<string, string> {
  if (!isApiError(error) || typeof error.details !== 'object' || error.details === null) return {};
  const fields = (error.details as { fields?: unknown }).fields;
  if (typeof fields !== 'object' || fields === null) return {};
  return Object.fromEntries(
    Object.entries(fields as Record<string, unknown>).filter((entry): entry is [string, string] => typeof entry[1] === 'string'),
  );
}

type Method = 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE';

export type RequestOptions<T> = {
  method?: Method;
  /** Serialised as JSON. */
  body?: unknown;
  /** Forwarded to fetch so TanStack Query can cancel requests nobody waits for any more. */
  signal?: AbortSignal;
  /** When given, the answer is checked against the contract schema before anyone uses it. */
  schema?: z.ZodType<T>;
};

function statusFallbackCode(status: number): ErrorCode {
  if (status === 401) return 'unauthenticated';
  if (status === 403) return 'forbidden';
  if (status === 404) return 'not_found';
  if (status === 409) return 'conflict';
  if (status === 429) return 'rate_limited';
  if (status === 503) return 'service_unavailable';
  return status >= 500 ? 'internal' : 'bad_request';
}

async function readJson(response: Response): Promise<unknown> {
  const text = await response.text();
  if (text.length === 0) return undefined;
  try {
    return JSON.parse(text);
  } catch {
    return undefined;
  }
}

/**
 * Calls the Cellwright API on this page's origin. `path` is relative to the API root ("/me").
 * Cookies go along only to the same origin: the session cookie is SameSite=Strict and httpOnly,
 * so the client never stores or sees the token itself.
 */
export async function apiRequest<T = undefined>(path: string, options: RequestOptions<T> = {}): Promise<T> {
  const { method = 'GET', body, signal, schema } = options;
  // fetch outside a browser (tests, server rendering) needs an absolute URL; the page origin is the API origin.
  const url = new URL(`${env.apiBasePath}${path}`, window.location.origin);
  const headers: Record<string, string> = { Accept: 'application/json' };
  if (body !== undefined) headers['Content-Type'] = 'application/json';

  let response: Response;
  try {
    response = await fetch(url, {
      method,
      headers,
      body: body === undefined ? undefined : JSON.stringify(body),
      credentials: 'same-origin',
      signal,
    });
  } catch (error) {
    if (signal?.aborted) throw error;
    throw new ApiError(0, 'network_error', 'The Cellwright server could not be reached. Check your connection and try again.');
  }

  const payload = await readJson(response);

  if (!response.ok) {
    const parsed = errorBody.safeParse(payload);
    if (parsed.success) {
      const { code, message, details } = parsed.data.error;
      throw new ApiError(response.status, code, message, details);
    }
    throw new ApiError(
      response.status,
      statusFallbackCode(response.status),
      `The server answered ${response.status} ${response.statusText}`.trim(),
    );
  }

  if (!schema) return payload as T;
  const checked = schema.safeParse(payload);
  if (!checked.success) {
    throw new ApiError(response.status, 'invalid_response', 'The server sent an answer this version of the studio does not understand.', checked.error.issues);
  }
  return checked.data;
}

/** Human-readable message for any error a screen may show. */
export function messageOf(error: unknown): string {
  if (isApiError(error)) return error.message;
  if (error instanceof Error && error.message) return error.message;
  return 'Something went wrong.';
}
