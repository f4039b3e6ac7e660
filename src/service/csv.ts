/**
 * CSV per RFC 4180 (IETF, 2005), section 2: records end with CRLF; a field containing a comma,
 * a double quote, CR or LF is enclosed in double quotes, and a double quote inside it is doubled.
 *
 * Spreadsheet formula injection (OWASP, "CSV Injection"): a text cell that begins with =, +, -,
 * @, a tab or a carriage return is read by spreadsheet programs as a formula, so such a cell is
 * prefixed with a single quote, which they show as text. Numbers are written as they are (a
 * negative rate is data, not a formula); level values and other text typed by users are not.
 */
const FORMULA_START = /^[=+\-@\t\r]/;

export function csvField(value: string | number | null): string {
  const raw = value === null ? "" : String(value);
  const text = typeof value === "string" && FORMULA_START.test(raw) ? `'${raw}` : raw;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export function toCsv(header: string[], rows: (string | number | null)[][]): string {
  return [header, ...rows].map((row) => row.map(csvField).join(",")).join("\r\n") + "\r\n";
}
