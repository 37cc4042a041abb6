import { nearestKey } from '../config/explain.ts';
import type { SourceConfig } from '../config/schema.ts';
import type { Rejection } from '../errors.ts';
import { dateFormatsOf } from './cellShapes.ts';
import { splitHeader } from './header.ts';
import { layoutOf } from './layout.ts';

/**
 * The likely fix of a rejection, when the file's shape gives it away: a header that
 * splits on another delimiter, dates in another recognisable format, numbers with a
 * decimal comma or thousands separators. Says whether the fix belongs in the file or in
 * the config. Only reads the rejection; the checks themselves stay in validate.ts.
 */
export function withFix(r: Rejection, source: SourceConfig | null): Rejection {
  return { ...r, ...fixFor(r, source) };
}

type Fix = Pick<Rejection, 'hint' | 'fixIn'>;

const OTHER_DELIMITERS = [',', ';', '\t', '|'];

function fixFor(r: Rejection, source: SourceConfig | null): Fix {
  if (r.code === 'unknown_kind') {
    return { fixIn: 'either', hint: 'rename the file to match a pattern, or add a source for it under "sources" in the config' };
  }
  if (r.code === 'no_header') return { fixIn: 'file', hint: wholeFileAgain(r.file) };
  if (source === null) return { fixIn: 'file' };
  if (r.code === 'missing_column') return missingColumnFix(r, source);
  if (r.code !== 'bad_value' || r.column === undefined || !r.value) return { fixIn: 'file' };
  const field = layoutOf(source.kind).fields.find((f) => f.name === r.column);
  if (field?.type === 'date') return dateFix(r.value, r.row ?? 1, source);
  if (field?.type === 'positive' || field?.type === 'finite' || field?.type === 'fraction') return numberFix(r.value, source);
  return { fixIn: 'file' };
}

/** A file that starts with data rows is most likely the rest of a delivery whose first part loaded on its own. */
function wholeFileAgain(file: string): string {
  return (
    'deliver the whole file again; to never load a partly written file, set "ingest.doneMarker" in the config ' +
    `(the sender then writes ${file}.done when finished) or "ingest.manifest": "required" (${file}.manifest)`
  );
}

function missingColumnFix(r: Rejection, source: SourceConfig): Fix {
  const wanted = layoutOf(source.kind)
    .fields.filter((f) => f.required)
    .map((f) => (source.columns[f.name] ?? f.name).trim().toLowerCase());
  for (const delimiter of OTHER_DELIMITERS.filter((d) => d !== source.delimiter)) {
    const names = splitHeader(r.value ?? '', delimiter).map((n) => n.toLowerCase());
    if (names.length > 1 && wanted.every((w) => names.includes(w))) {
      return { fixIn: 'config', hint: `the header splits on ${JSON.stringify(delimiter)} into the expected columns: set "delimiter": ${JSON.stringify(delimiter)} in source "${source.name}"` };
    }
  }
  // the rejection's value is the header's names joined by ","
  const near = nearestKey(r.column ?? '', splitHeader(r.value ?? '', ','));
  const named = near === undefined ? '<name in the header>' : near;
  return {
    fixIn: 'either',
    hint: `if the sender names this column differently, map it in source "${source.name}": "columns": { "${r.column}": "${named}" }; if it is absent, the file must be fixed`,
  };
}

function dateFix(raw: string, row: number, source: SourceConfig): Fix {
  const formats = dateFormatsOf(raw);
  if (formats.length === 0 || formats.includes(source.dateFormat)) return { fixIn: 'file' };
  const shown = formats.map((f) => `"${f}"`).join(' or ');
  if (row > 1) {
    return { fixIn: 'file', hint: `the rows above it were read as "${source.dateFormat}" but this one looks like ${shown}: correct it in the file` };
  }
  return { fixIn: 'config', hint: `this looks like ${shown}: if the sender writes dates that way, set "dateFormat": ${shown} in source "${source.name}"` };
}

function numberFix(raw: string, source: SourceConfig): Fix {
  const text = raw.trim();
  if (source.decimal === '.' && /^[+-]?\d{1,3}(\.\d{3})*,\d+$/.test(text)) {
    return { fixIn: 'config', hint: `this is written with a decimal comma: if the sender writes numbers that way, set "decimal": "," in source "${source.name}"` };
  }
  if (/^[+-]?\d{1,3}(,\d{3})+(\.\d+)?$/.test(text)) {
    // "decimal": "," would read it wrongly (1,045.10 as 1.04510): no setting takes a comma beside a decimal point
    return { fixIn: 'file', hint: `"," here separates thousands, which no setting reads beside a decimal point: the sender must write ${text.replaceAll(',', '')}` };
  }
  if (/^[+-]?\d{1,3}([ '\u00a0\u202f]\d{3})+([.,]\d+)?$/.test(text)) {
    return { fixIn: 'file', hint: 'thousands grouped with spaces or apostrophes are not read: the sender must write plain digits' };
  }
  return { fixIn: 'file' };
}
