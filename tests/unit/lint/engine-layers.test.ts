// The lint's own layering rules, run through ESLint with the project's configuration on made-up sources placed at
// real paths (the rules read the files they import from disk).
import path from 'node:path';
import { ESLint } from 'eslint';
import { describe, expect, it } from 'vitest';

const root = path.resolve(__dirname, '../../..');
const eslint = new ESLint({ cwd: root });

async function messages(file: string, source: string): Promise<string[]> {
  const [result] = await eslint.lintText(source, { filePath: path.join(root, file) });
  return result.messages.map((m) => `${m.ruleId}: ${m.message}`);
}

describe('engine layers', () => {
  it('refuses a core kernel that imports the parallel search', async () => {
    const found = await messages('server/engine/core/lloyd.ts', "import { NearestSearch } from '../parallel/nearest-search';\nexport const s = NearestSearch;\n");
    expect(found.some((m) => m.startsWith('cellwright/layers') && m.includes('core never imports parallel'))).toBe(true);
  });

  it('lets training wire the core kernels to the parallel search', async () => {
    const found = await messages(
      'server/engine/training/index.ts',
      "import { runLloyd } from '../core/lloyd';\nimport { NearestSearch } from '../parallel/nearest-search';\nexport const both = [runLloyd, NearestSearch];\n",
    );
    expect(found.filter((m) => m.startsWith('cellwright/'))).toEqual([]);
  });

  it('refuses the io layer importing the format layer above it', async () => {
    const found = await messages('server/engine/io/npy.ts', "import { writeContainer } from '../format/container';\nexport const e = writeContainer;\n");
    expect(found.some((m) => m.includes('io never imports format'))).toBe(true);
  });

  it('puts the model above the layers it reads (io, format) and refuses format importing the model', async () => {
    const reads = await messages('server/engine/model/anomaly.ts', "import { tile } from '../io/patches';\nimport { reconstruct } from '../format/codec';\nexport const both = [tile, reconstruct];\n");
    expect(reads.filter((m) => m.startsWith('cellwright/'))).toEqual([]);
    const found = await messages('server/engine/format/codec.ts', "import { scoreVectors } from '../model/mixture';\nexport const s = scoreVectors;\n");
    expect(found.some((m) => m.includes('format never imports model'))).toBe(true);
  });

  it('puts the structured codebooks above training and below the format that stores them', async () => {
    const reads = await messages('server/engine/structures/residual.ts', "import { train } from '../training/index';\nexport const t = train;\n");
    expect(reads.filter((m) => m.startsWith('cellwright/'))).toEqual([]);
    const stores = await messages('server/engine/format/codec.ts', "import { encodeTree } from '../structures/tree';\nexport const e = encodeTree;\n");
    expect(stores.filter((m) => m.startsWith('cellwright/layers'))).toEqual([]);
    const found = await messages('server/engine/training/ecvq.ts', "import { trainTree } from '../structures/tree';\nexport const t = trainTree;\n");
    expect(found.some((m) => m.includes('training never imports structures'))).toBe(true);
  });
});

describe('import cycles', () => {
  it('names the cycle when a file imports something that imports it back', async () => {
    // The engine's entry imports the vocabulary, so the vocabulary importing the entry closes a loop.
    const found = await messages('server/engine/vocabulary.ts', "import { train } from './index';\nexport const t = train;\n");
    expect(found.some((m) => m.startsWith('cellwright/no-cycle') && m.includes('server/engine/index.ts'))).toBe(true);
  });

  it('ignores type-only imports, which are erased before anything runs', async () => {
    const found = await messages('server/engine/vocabulary.ts', "import type { TrainOptions } from './index';\nexport type T = TrainOptions;\n");
    expect(found.filter((m) => m.startsWith('cellwright/no-cycle'))).toEqual([]);
  });
});
