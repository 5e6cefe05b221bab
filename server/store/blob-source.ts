/**
 * A stored blob read by byte range, as a source for geotiff.js: each range becomes the few stored chunks that hold it
 * (Store.readBlobChunks), so any server process serves a COG layer's map tiles straight from the shared store,
 * reading its header once and then only the compressed tiles a map tile samples. The most recently read chunks are
 * kept (a bounded cache), so the header's several small reads cost one read of its chunks.
 */
import type { Store } from './types.ts';
import { BLOB_CHUNK_BYTES } from './sql-store.ts';

/** Chunks kept per open blob: 64 × 16 KiB = 1 MiB. */
const CACHED_CHUNKS = 64;

interface Slice {
  offset: number;
  length: number;
}

export class StoredBlobSource {
  private readonly chunks = new Map<number, Uint8Array>();

  constructor(
    private readonly store: Pick<Store, 'readBlobChunks'>,
    private readonly hash: string,
    readonly fileSize: number,
  ) {}

  /** The bytes of each slice (cut short at the end of the blob), as geotiff.js asks for them. */
  async fetch(slices: Slice[]): Promise<ArrayBuffer[]> {
    return Promise.all(slices.map(async (s) => (await this.fetchSlice(s)).data));
  }

  async fetchSlice(slice: Slice): Promise<Slice & { data: ArrayBuffer }> {
    const start = Math.max(0, Math.min(this.fileSize, slice.offset));
    const end = Math.max(start, Math.min(this.fileSize, slice.offset + slice.length));
    const out = new Uint8Array(end - start);
    if (end > start) {
      const first = Math.floor(start / BLOB_CHUNK_BYTES);
      const chunks = await this.load(first, Math.floor((end - 1) / BLOB_CHUNK_BYTES));
      chunks.forEach((chunk, k) => {
        const at = (first + k) * BLOB_CHUNK_BYTES;
        const from = Math.max(start, at),
          to = Math.min(end, at + chunk.byteLength);
        out.set(chunk.subarray(from - at, to - at), from - start);
      });
    }
    return { offset: slice.offset, length: out.byteLength, data: out.buffer };
  }

  /**
   * Chunks first…last: those cached are taken at once (held, so a read finishing meanwhile cannot evict them), the
   * span of the missing ones is read in one query.
   */
  private async load(first: number, last: number): Promise<Uint8Array[]> {
    const out: (Uint8Array | undefined)[] = [];
    for (let i = first; i <= last; i++) out.push(this.chunks.get(i));
    const a = out.findIndex((c) => c === undefined);
    if (a >= 0) {
      const b = out.findLastIndex((c) => c === undefined);
      const got = await this.store.readBlobChunks(this.hash, first + a, first + b);
      if (got.length !== b - a + 1) throw new Error(`blob ${this.hash}: chunks ${first + a}–${first + b} not all stored`);
      got.forEach((c, k) => (out[a + k] = c));
    }
    out.forEach((c, k) => {
      this.chunks.delete(first + k);
      this.chunks.set(first + k, c!);
    });
    while (this.chunks.size > CACHED_CHUNKS) this.chunks.delete(this.chunks.keys().next().value as number);
    return out as Uint8Array[];
  }

  async close(): Promise<void> {
    this.chunks.clear();
  }
}
