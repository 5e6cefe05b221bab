import { vi } from 'vitest';
import { main } from '../../server/cli/main.ts';

/** Runs `subtherm <args>` in this process: the exit code and what it printed on stdout and stderr (both muted). */
export async function runCli(args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '',
    err = '';
  const o = vi.spyOn(process.stdout, 'write').mockImplementation((s: string | Uint8Array) => {
    out += String(s);
    return true;
  });
  const e = vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => {
    err += String(s);
    return true;
  });
  try {
    return { code: await main(args), out, err };
  } finally {
    o.mockRestore();
    e.mockRestore();
  }
}

/** Runs `subtherm <args> --json` in this process (`--json` added unless given): the exit code and the last JSON line printed. */
export async function runCliJson(args: string[]): Promise<{ code: number; json: Record<string, any> }> {
  const { code, out } = await runCli(args.includes('--json') ? args : [...args, '--json']);
  return { code, json: JSON.parse(out.trim().split('\n').pop() as string) };
}
