// Maps a position in a bundle back to the source file and line it came from, using the
// bundler's source map (Source Map Revision 3: base64 VLQ "mappings"), so an error thrown while
// a module loads can point at the user's own line.
import { isAbsolute, resolve } from 'node:path';

export interface SourcePlace {
  /** Absolute path of the original file. */
  file: string;
  /** 1-based line and column in that file. */
  line: number;
  column: number;
}

const BASE64 = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';
const BASE64_VALUE = new Map<string, number>([...BASE64].map((c, i) => [c, i]));

/** Decodes one line's segments: each a list of 1, 4 or 5 numbers, fields relative as the format says. */
function decodeSegments(text: string): number[][] {
  const segments: number[][] = [];
  let fields: number[] = [];
  let value = 0;
  let shift = 0;
  for (const ch of text) {
    if (ch === ',') {
      if (fields.length) segments.push(fields);
      fields = [];
      continue;
    }
    const digit = BASE64_VALUE.get(ch);
    if (digit === undefined) return segments;
    value += (digit & 31) << shift;
    if (digit & 32) {
      shift += 5;
      continue;
    }
    fields.push(value & 1 ? -(value >>> 1) : value >>> 1);
    value = 0;
    shift = 0;
  }
  if (fields.length) segments.push(fields);
  return segments;
}

interface RawSourceMap {
  sources?: unknown;
  sourceRoot?: unknown;
  mappings?: unknown;
}

/**
 * The original place of a 1-based bundle line and 0-based column, or undefined when the map
 * says nothing about it. `mapDir` is the folder the map's `sources` are relative to.
 */
export function originalPlace(mapJson: string, mapDir: string, line: number, column: number): SourcePlace | undefined {
  let map: RawSourceMap;
  try {
    map = JSON.parse(mapJson) as RawSourceMap;
  } catch {
    return undefined;
  }
  if (typeof map.mappings !== 'string' || !Array.isArray(map.sources)) return undefined;
  const lines = map.mappings.split(';');
  if (line < 1 || line > lines.length) return undefined;
  // Source index, original line and column carry over from line to line; the generated
  // column restarts on each line.
  let source = 0;
  let origLine = 0;
  let origColumn = 0;
  let found: [number, number, number] | undefined;
  for (let i = 0; i < line; i++) {
    let genColumn = 0;
    for (const seg of decodeSegments(lines[i] ?? '')) {
      genColumn += seg[0] ?? 0;
      if (seg.length >= 4) {
        source += seg[1] ?? 0;
        origLine += seg[2] ?? 0;
        origColumn += seg[3] ?? 0;
        if (i === line - 1 && genColumn <= column) found = [source, origLine, origColumn];
      }
    }
  }
  if (!found) return undefined;
  const name = map.sources[found[0]];
  if (typeof name !== 'string') return undefined;
  const root = typeof map.sourceRoot === 'string' ? map.sourceRoot : '';
  const path = root + name;
  return { file: isAbsolute(path) ? path : resolve(mapDir, path), line: found[1] + 1, column: found[2] + 1 };
}

/** One mapping of a source map: a place in the bundle and the original place it came from. */
export interface MappedSegment {
  /** 1-based line and 0-based column in the bundle. */
  genLine: number;
  genColumn: number;
  /** Absolute path, 1-based line and column of the original. */
  place: SourcePlace;
}

/** Every mapping of a source map that names an original place, in bundle order (coverage mapping reads them all). */
export function mappedSegments(mapJson: string, mapDir: string): MappedSegment[] {
  let map: RawSourceMap;
  try {
    map = JSON.parse(mapJson) as RawSourceMap;
  } catch {
    return [];
  }
  if (typeof map.mappings !== 'string' || !Array.isArray(map.sources)) return [];
  const root = typeof map.sourceRoot === 'string' ? map.sourceRoot : '';
  const files = map.sources.map((name: unknown) => {
    if (typeof name !== 'string') return undefined;
    const path = root + name;
    return isAbsolute(path) ? path : resolve(mapDir, path);
  });
  const out: MappedSegment[] = [];
  let source = 0;
  let origLine = 0;
  let origColumn = 0;
  const lines = map.mappings.split(';');
  for (let i = 0; i < lines.length; i++) {
    let genColumn = 0;
    for (const seg of decodeSegments(lines[i] ?? '')) {
      genColumn += seg[0] ?? 0;
      if (seg.length < 4) continue;
      source += seg[1] ?? 0;
      origLine += seg[2] ?? 0;
      origColumn += seg[3] ?? 0;
      const file = files[source];
      if (file !== undefined) out.push({ genLine: i + 1, genColumn, place: { file, line: origLine + 1, column: origColumn + 1 } });
    }
  }
  return out;
}
