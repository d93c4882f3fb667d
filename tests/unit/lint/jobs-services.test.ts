// The lint's rule for the one direction between jobs and services (DEVELOPERS.md "Layers"), run through ESLint with
// the project's configuration on made-up sources placed at real paths.
import path from 'node:path';
import { ESLint } from 'eslint';
import { describe, expect, it } from 'vitest';

const root = path.resolve(__dirname, '../../..');
const eslint = new ESLint({ cwd: root });

async function layerMessages(file: string, source: string): Promise<string[]> {
  const [result] = await eslint.lintText(source, { filePath: path.join(root, file) });
  return result.messages.filter((m) => m.ruleId === 'cellwright/layers').map((m) => m.message);
}

describe('jobs and services', () => {
  it('refuses a service that imports a job handler', async () => {
    const found = await layerMessages('server/services/runs.ts', "import { trainHandler } from '../jobs/handlers/train';\nexport const h = trainHandler;\n");
    expect(found.some((m) => m.includes('services never import server/jobs'))).toBe(true);
  });

  it('refuses a service that imports the runner', async () => {
    const found = await layerMessages('server/services/runs.ts', "import { createJobRunner } from '../jobs/runner';\nexport const r = createJobRunner;\n");
    expect(found.some((m) => m.includes('services never import server/jobs'))).toBe(true);
  });

  it('lets a handler use a service module and a service see the queue interface', async () => {
    expect(await layerMessages('server/jobs/handlers/evaluate.ts', "import { toTaskCodebook } from '../../services/task-codebook';\nexport const t = toTaskCodebook;\n")).toEqual([]);
    expect(await layerMessages('server/services/runs.ts', "import type { JobQueue } from '../jobs/queue';\nexport type Q = JobQueue;\n")).toEqual([]);
  });
});
