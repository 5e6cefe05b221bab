import { vi } from 'vitest';
import { main } from '../../server/cli/main.ts';

/** Runs a CLI verb in-process with `--json`; returns its exit code and the last JSON line it printed. */
export async function runCliJson(verb: string, args: string[]): Promise<{ code: number; json: Record<string, any> }> {
  let out = '';
  const spy = vi.spyOn(process.stdout, 'write').mockImplementation((s: string | Uint8Array) => {
    out += String(s);
    return true;
  });
  const err = vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
  try {
    const code = await main([verb, ...args, '--json']);
    return { code, json: JSON.parse(out.trim().split('\n').pop() as string) as Record<string, any> };
  } finally {
    spy.mockRestore();
    err.mockRestore();
  }
}
