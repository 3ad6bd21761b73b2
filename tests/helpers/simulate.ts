// Runs the fleet simulator as a person would (`npm run simulate -- …`), through tsx in a child process.
import { execFile } from 'node:child_process';
import path from 'node:path';

const root = path.resolve(__dirname, '../..');

export type SimulatorRun = { code: number; stdout: string; stderr: string };

/** `npm run simulate -- <args>` with extra environment (e.g. the test app's data folder); never rejects. */
export function simulate(args: string[], options: { env?: Record<string, string>; timeoutMs: number }): Promise<SimulatorRun> {
  return new Promise((resolve) => {
    execFile(
      process.execPath,
      [path.join(root, 'node_modules/tsx/dist/cli.mjs'), 'scripts/simulator/index.ts', ...args],
      { cwd: root, env: { ...process.env, ...options.env }, timeout: options.timeoutMs },
      (error, stdout, stderr) => resolve({ code: error ? (typeof error.code === 'number' ? error.code : 1) : 0, stdout, stderr }),
    );
  });
}
