#!/usr/bin/env node
// Launcher for the `cellwright` command: loads the TypeScript CLI through tsx's ESM API, so no build step is needed.
import { tsImport } from 'tsx/esm/api';

const { runAsProcess } = await tsImport('../server/cli/main.ts', import.meta.url);
await runAsProcess(process.argv.slice(2));
