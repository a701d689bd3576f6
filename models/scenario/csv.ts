/**
 * CSV text split into records (RFC 4180: comma-separated, fields optionally in double quotes, a
 * doubled quote inside quotes stands for one, CRLF or LF line ends). Pure text: the command line
 * reads files with it, the page reads pasted or chosen text with the same rules.
 */

/** One record of the text: its fields, which of them were quoted, and the line it starts on (1-based). */
export interface CsvRecord {
  fields: string[];
  quoted: boolean[];
  line: number;
}

/** Splits CSV text into records (RFC 4180 §2), or the first quoting error with its line. */
export function splitCsv(text: string): { ok: true; records: CsvRecord[] } | { ok: false; line: number; message: string } {
  const records: CsvRecord[] = [];
  let fields: string[] = [];
  let quoted: boolean[] = [];
  let field = '';
  let isQuoted = false;
  let inQuotes = false;
  let afterQuote = false;
  let line = 1;
  let start = 1;
  const endField = () => {
    fields.push(isQuoted ? field : field.trim());
    quoted.push(isQuoted);
    field = '';
    isQuoted = false;
    afterQuote = false;
  };
  const endRecord = () => {
    endField();
    records.push({ fields, quoted, line: start });
    fields = [];
    quoted = [];
  };
  // A byte-order mark is not part of the first name.
  const body = text.startsWith('\ufeff') ? text.slice(1) : text;
  for (let i = 0; i < body.length; i++) {
    const c = body[i];
    if (inQuotes) {
      if (c === '"') {
        if (body[i + 1] === '"') {
          field += '"';
          i++;
        } else {
          inQuotes = false;
          afterQuote = true;
        }
      } else {
        if (c === '\n') line++;
        field += c;
      }
      continue;
    }
    if (c === ',') endField();
    else if (c === '\n' || c === '\r') {
      if (c === '\r' && body[i + 1] === '\n') i++;
      endRecord();
      line++;
      start = line;
    } else if (c === '"') {
      if (field.trim() !== '' || afterQuote) return { ok: false, line, message: 'a quote inside an unquoted field; put the whole field in quotes and double the quote ("")' };
      field = '';
      isQuoted = true;
      inQuotes = true;
    } else if (afterQuote) {
      if (c !== ' ' && c !== '\t') return { ok: false, line, message: 'text after a closing quote; a quoted field ends at its quote' };
    } else field += c;
  }
  if (inQuotes) return { ok: false, line: start, message: 'a quoted field is never closed' };
  // The last record, unless the text ended with a line break.
  if (field !== '' || isQuoted || fields.length > 0) endRecord();
  // Blank lines at the very end hold no row; elsewhere they are reported.
  while (records.length > 0 && isBlankRecord(records[records.length - 1])) records.pop();
  return { ok: true, records };
}

/** An empty line: one unquoted empty field. */
export function isBlankRecord(r: CsvRecord): boolean {
  return r.fields.length === 1 && r.fields[0] === '' && !r.quoted[0];
}
