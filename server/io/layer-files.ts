import { mkdtemp, rename, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

/**
 * Local copies of stored run-layer GeoTIFFs (COGs), named by their content hash, so map tiles can read them window by
 * window from disk instead of decoding a whole grid into memory. A copy is written once (to a partial name, then
 * renamed) and shared by every later open; the folder is private to this server process and removed on `close`.
 */
export class LayerFiles {
  private dir: Promise<string> | null = null;
  private readonly writing = new Map<string, Promise<string>>();

  constructor(private readonly parent: string = tmpdir()) {}

  /** The path of the copy of `bytes` (content hash `hash`), writing it first if needed. */
  async path(hash: string, bytes: Uint8Array): Promise<string> {
    if (!/^[0-9a-f]{16,128}$/.test(hash)) throw new RangeError(`not a content hash: ${hash}`);
    this.dir ??= mkdtemp(join(this.parent, 'subtherm-layers-'));
    const file = join(await this.dir, `${hash}.tif`);
    const pending = this.writing.get(hash);
    if (pending) return pending;
    if (
      await stat(file).then(
        () => true,
        () => false,
      )
    )
      return file;
    const write = (async () => {
      const partial = `${file}.partial`;
      try {
        await writeFile(partial, bytes);
        await rename(partial, file);
        return file;
      } catch (e) {
        await rm(partial, { force: true });
        throw e;
      }
    })().finally(() => this.writing.delete(hash));
    this.writing.set(hash, write);
    return write;
  }

  /** Removes every copy. */
  async close(): Promise<void> {
    if (this.dir === null) return;
    const dir = await this.dir.catch(() => null);
    this.dir = null;
    if (dir !== null) await rm(dir, { recursive: true, force: true });
  }
}
