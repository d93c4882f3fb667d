import type request from 'supertest';
import type { ZodType } from 'zod';
import { errorBody } from '../../server/contracts';
import { routeTable } from '../../server/http/description/route-table';
import { refResolver, validateJson, type Schema } from './json-schema';

type Operation = { responses: Record<string, { content?: Record<string, { schema?: Schema }> }> };
type Document = { paths: Record<string, Record<string, Operation>> };

/** One answer as any client saw it. */
export interface Answer {
  method: string;
  /** The request's path, with its query if any. */
  path: string;
  status: number;
  contentType: string;
  text: string;
}

export interface CheckedResponse {
  operation: string;
  status: number;
}

/** The template a concrete path matches, preferring literal segments (…/codebooks/import over …/{codebookId}). */
function templateOf(doc: Document, method: string, pathname: string): string | undefined {
  const candidates = Object.keys(doc.paths).filter((template) => {
    if (!doc.paths[template][method]) return false;
    const pattern = new RegExp(`^${template.replace(/\{\w+\}/g, '[^/]+')}$`);
    return pattern.test(pathname);
  });
  const literal = (t: string) => t.split('/').filter((s) => !s.startsWith('{')).length;
  return candidates.sort((a, b) => literal(b) - literal(a))[0];
}

/** The zod schema the route table gives a status and media type, when it is a zod schema. */
function zodSchemaOf(method: string, template: string, status: number, mediaType: string): ZodType | undefined {
  const route = routeTable.find((r) => r.method === method && r.path.replace(/:(\w+)/g, '{$1}') === template);
  const content = route?.responses[status]?.content?.[mediaType];
  return content && typeof content === 'object' && !('ref' in content) ? content : undefined;
}

/**
 * Checks real responses against the served OpenAPI document: the status must be documented for the operation, the
 * media type among that status's content, and a JSON body must satisfy the status's JSON Schema (the document's own
 * schema, by a validator that reads JSON Schema) and the zod schema it was generated from. Every check is recorded.
 */
export function responseChecker(doc: Document, external: Record<string, Schema>) {
  const resolve = refResolver(doc, external);
  const checked: CheckedResponse[] = [];

  function check(res: request.Response): request.Response {
    const req = (res as unknown as { req: { method: string; path: string } }).req;
    checkAnswer({ method: req.method, path: req.path, status: res.status, contentType: res.headers['content-type'] ?? '', text: (res.text as string | undefined) ?? '' });
    return res;
  }

  function checkAnswer(res: Answer): void {
    const method = res.method.toLowerCase();
    const pathname = new URL(res.path, 'http://x').pathname;
    const where = `${res.method} ${pathname} → ${res.status}`;
    const template = templateOf(doc, method, pathname);
    if (!template) throw new Error(`${where}: no operation in the document`);
    const documented = doc.paths[template][method].responses[String(res.status)];
    if (!documented) throw new Error(`${where}: status not documented for ${method.toUpperCase()} ${template} (body ${res.text.slice(0, 300)})`);
    const mediaType = res.contentType.split(';')[0].trim();
    const hasBody = res.status !== 204 && res.status !== 304 && mediaType !== '';
    if (hasBody) {
      const content = documented.content ?? {};
      const declared = content[mediaType] ?? content[`${mediaType.split('/')[0]}/*`];
      if (!declared) throw new Error(`${where}: ${mediaType} is not among ${Object.keys(content).join(', ') || 'no content'}`);
      if (mediaType === 'application/json' || mediaType.endsWith('+json')) {
        const body = JSON.parse(res.text) as unknown;
        if (!declared.schema) throw new Error(`${where}: JSON without a schema`);
        const issues = validateJson(declared.schema, body, resolve);
        if (issues.length > 0) throw new Error(`${where}: the document's schema refuses the body: ${JSON.stringify(issues.slice(0, 5))}`);
        const zod = zodSchemaOf(method, template, res.status, mediaType) ?? (res.status >= 400 ? errorBody : undefined);
        const parsed = zod?.safeParse(body);
        if (parsed && !parsed.success) throw new Error(`${where}: the contract refuses the body: ${parsed.error.message}`);
      }
    }
    checked.push({ operation: `${method.toUpperCase()} ${template}`, status: res.status });
  }

  return { check, checkAnswer, checked };
}
