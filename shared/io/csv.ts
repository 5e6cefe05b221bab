import { InputError } from '../errors.ts';

/**
 * Splits RFC 4180 CSV (quoted fields, doubled quotes, CRLF or LF line ends) into records of fields, each with the
 * physical line (1-based, as a spreadsheet numbers its rows) on which it starts.
 */
function csvRecords(text: string): { records: string[][]; starts: number[] } {
  const records: string[][] = [];
  // The physical line (1-based, as a spreadsheet numbers its rows) on which each record starts.
  const starts: number[] = [];
  let line = 1;
  let recordLine = 1;
  let field = '';
  let record: string[] = [];
  let inQuotes = false;
  let i = 0;
  const n = text.length;
  if (text.charCodeAt(0) === 0xfeff) i = 1; // byte-order mark
  while (i < n) {
    const ch = text[i];
    if (inQuotes) {
      if (ch === '"') {
        if (text[i + 1] === '"') {
          field += '"';
          i += 2;
          continue;
        }
        inQuotes = false;
        i++;
        continue;
      }
      if (ch === '\n' || (ch === '\r' && text[i + 1] !== '\n')) line++;
      field += ch;
      i++;
      continue;
    }
    if (ch === '"' && field.length === 0) {
      inQuotes = true;
      i++;
      continue;
    }
    if (ch === ',') {
      record.push(field);
      field = '';
      i++;
      continue;
    }
    if (ch === '\r' || ch === '\n') {
      record.push(field);
      field = '';
      records.push(record);
      record = [];
      starts.push(recordLine);
      if (ch === '\r' && text[i + 1] === '\n') i++;
      i++;
      line++;
      recordLine = line;
      continue;
    }
    field += ch;
    i++;
  }
  if (inQuotes) throw new InputError('CSV has an unterminated quoted field', [{ problem: 'a field opened with " is never closed' }], 'malformed_csv');
  if (field.length > 0 || record.length > 0) {
    record.push(field);
    records.push(record);
    starts.push(recordLine);
  }
  return { records, starts };
}

/**
 * Parses RFC 4180 CSV into a header and rows of strings with their line numbers. Blank lines are skipped; lines
 * that start with `#` before the header are comments (our own exports begin with a caution comment). Every row must
 * have the header's number of fields.
 */
export function parseCsv(text: string): { header: string[]; rows: string[][]; lines: number[]; headerLine: number } {
  const { records, starts } = csvRecords(text);
  const keep = records.map((_, k) => k).filter((k) => !(records[k].length === 1 && records[k][0].trim() === ''));
  const useful = keep.map((k) => records[k]);
  const usefulLines = keep.map((k) => starts[k]);
  let start = 0;
  while (start < useful.length && useful[start][0]?.trimStart().startsWith('#')) start++;
  if (start >= useful.length)
    throw new InputError('CSV has no header row', [{ problem: 'expected a header row such as longitude,latitude,...' }], 'malformed_csv');
  const header = useful[start].map((h) => h.trim());
  const rows = useful.slice(start + 1);
  const lines = usefulLines.slice(start + 1);
  rows.forEach((r, k) => {
    if (r.length !== header.length) {
      throw new InputError(
        `CSV line ${lines[k]} has ${r.length} fields, the header (line ${usefulLines[start]}) has ${header.length}`,
        [{ feature: `line ${lines[k]}`, problem: `expected ${header.length} fields, got ${r.length}` }],
        'malformed_csv',
      );
    }
  });
  return { header, rows, lines, headerLine: usefulLines[start] };
}

/** Formats one CSV field, quoting when needed. */
export function csvField(v: unknown): string {
  if (v === null || v === undefined) return '';
  const s = typeof v === 'number' ? (Number.isFinite(v) ? String(v) : '') : String(v);
  return /[",\r\n]/.test(s) ? '"' + s.replace(/"/g, '""') + '"' : s;
}
