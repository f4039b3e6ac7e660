/**
 * CSV per RFC 4180 (IETF, 2005), section 2: records end with CRLF; a field containing a comma,
 * a double quote, CR or LF is enclosed in double quotes, and a double quote inside it is doubled.
 */
export function csvField(value: string | number | null): string {
  const text = value === null ? "" : String(value);
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export function toCsv(header: string[], rows: (string | number | null)[][]): string {
  return [header, ...rows].map((row) => row.map(csvField).join(",")).join("\r\n") + "\r\n";
}
