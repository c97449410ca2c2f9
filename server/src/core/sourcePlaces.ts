// Where in the user's source an error happened, from the bundle's stack frames mapped through
// its source map: the op's own throw (thrownAt) and the module's failure while loading.
import { existsSync } from 'node:fs';
import { UNAVAILABLE_BUILTIN_NAMESPACE } from '../sandbox/builtinStandIn';
import type { SourcePlace } from '../sandbox/sourceMap';

export type PlaceFinder = (line: number, column: number) => SourcePlace | undefined;

/**
 * The first bundle frame (innermost first) whose place `preferred` accepts, else the first that
 * maps anywhere. Frames in a built-in's stand-in are skipped: the error is made there, the user
 * called it elsewhere.
 */
function firstPlace(frames: Array<{ line: number; column: number }>, originalPlace: PlaceFinder, preferred: (place: SourcePlace) => boolean): SourcePlace | undefined {
  let first: SourcePlace | undefined;
  for (const frame of frames) {
    const place = originalPlace(frame.line, frame.column);
    if (!place || place.file.includes(UNAVAILABLE_BUILTIN_NAMESPACE)) continue;
    if (preferred(place)) return place;
    first ??= place;
  }
  return first;
}

/**
 * Where user code threw: the innermost frame in the user's own files (not a package under
 * node_modules; a package's own source map can point outside it, at files that are not there).
 */
export function thrownPlace(frames: Array<{ line: number; column: number }>, originalPlace: PlaceFinder): SourcePlace | undefined {
  return firstPlace(frames, originalPlace, (place) => !/[\\/]node_modules[\\/]/.test(place.file) && existsSync(place.file));
}

/** Where the module threw while loading: the first frame in the checked file. */
export function loadErrorPlace(file: string, frames: Array<{ line: number; column: number }>, originalPlace: PlaceFinder): SourcePlace | undefined {
  return firstPlace(frames, originalPlace, (place) => place.file === file);
}
