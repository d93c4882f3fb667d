/** Where a command writes: injected so tests can run commands in-process and read what they printed. */
export interface CliContext {
  stdout: { write(text: string): unknown };
  stderr: { write(text: string): unknown };
  stderrIsTTY: boolean;
  signal?: AbortSignal;
}

export function processContext(signal?: AbortSignal): CliContext {
  return { stdout: process.stdout, stderr: process.stderr, stderrIsTTY: Boolean(process.stderr.isTTY), signal };
}
