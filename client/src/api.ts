/** Thin typed access to the server's JSON API. Errors carry the server's own message. */
export interface AppConfig {
  version: string;
  caution: string;
  demo: { name: string; invented: boolean; datasets: Record<string, string> };
  terrain: { tiles: string; bounds: [number, number, number, number]; minzoom: number; maxzoom: number; encoding: 'mapbox'; tileSize: number } | null;
}

export class ApiError extends Error {
  constructor(message: string, readonly status: number, readonly details: unknown[] = []) {
    super(message);
  }
}

export async function getJson<T>(path: string): Promise<T> {
  const res = await fetch(path, { headers: { accept: 'application/json' } });
  const body = (await res.json().catch(() => null)) as { error?: { message: string; details?: unknown[] } } | null;
  if (!res.ok) throw new ApiError(body?.error?.message ?? `${res.status} ${res.statusText}`, res.status, body?.error?.details ?? []);
  return body as T;
}
