// CSV as spreadsheets read it: RFC 4180 fields, and cells a spreadsheet would run as a formula neutralised.

/**
 * OWASP "CSV Injection": a cell that begins with =, +, -, @, a tab (0x09) or a carriage return (0x0D) may
 * be run as a formula; prefixing a single quote makes the spreadsheet show it as text. Numbers we write
 * ourselves (a JS number, e.g. -3.5) are data, not text someone typed, and stay numbers.
 */
export function neutraliseCell(value: string): string {
  return /^[=+\-@\t\r]/.test(value) ? `'${value}` : value;
}

/** RFC 4180 §2: every field in double quotes, a double quote inside doubled. */
export function csvField(value: string | number | boolean | null | undefined): string {
  if (value === null || value === undefined) return '""';
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : '""';
  const text = typeof value === 'boolean' ? String(value) : neutraliseCell(value);
  return `"${text.replace(/"/g, '""')}"`;
}

/** Rows to CSV text: CRLF line ends (RFC 4180 §2.1), a header row first. */
export function toCsv(header: string[], rows: (string | number | boolean | null | undefined)[][]): string {
  return [header, ...rows].map((row) => row.map(csvField).join(',')).join('\r\n') + '\r\n';
}
