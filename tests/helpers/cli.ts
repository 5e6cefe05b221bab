import { vi } from 'vitest';
import { main } from '../../server/cli/main.ts';

/** Runs `subtherm <args> --json` in this process: the exit code and the last JSON line printed (stderr muted). */
export async function runCliJson(args: string[]): Promise<{ code: number; json: Record<string, any> }> {
  let out = '';
  const spy = vi.spyOn(process.stdout, 'write').mockImplementation((s: string | Uint8Array) => {
    out += String(s);
    return true;
  });
  const err = vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
  try {
    const code = await main([...args, '--json']);
    return { code, json: JSON.parse(out.trim().split('\n').pop() as string) };
  } finally {
    spy.mockRestore();
    err.mockRestore();
  }
}
