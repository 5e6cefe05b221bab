/**
 * Storage behind an interface, so the embedded SQLite default can be joined by a server database for larger teams.
 * Everything stored is content-addressed by the SHA-256 of its canonical bytes where that makes sense.
 */
export interface DatasetRecord {
  id: string;
  kind: string;
  featureCount: number;
  contentHash: string;
  createdAt: string;
  title: string | null;
}

export interface Store {
  /** Stores a data set; with `id` given (the demo's stable ids) an existing record of that id is kept. */
  putDataset(input: { id?: string; kind: string; body: string; featureCount: number; title?: string }): DatasetRecord;
  getDataset(id: string): (DatasetRecord & { body: string }) | null;
  listDatasets(): DatasetRecord[];
  close(): void;
}
