// What a caller can ask of one Checker.checkFile call: the text, which ops, a stop signal,
// listeners for results, bundles, skips and coverage, and settings for this call only.
import type { CheckSettings } from '../engine/settings';
import type { OpDescriptor, OpResult } from '../model/types';

export interface CheckFileOptions {
  /** The file's text (an unsaved editor buffer); default: read from disk. */
  text?: string;
  /** Only ops whose forward name contains this text. */
  filter?: string;
  signal?: AbortSignal;
  /** Called once per op as soon as its result is known. */
  onResult?: (result: OpResult) => void;
  /** Overrides the Checker's settings for this call. */
  settings?: CheckSettings;
  /** Called with the bundle's input files (absolute paths) once the file is bundled. */
  onBundle?: (inputs: string[]) => void;
  /** Only ops this accepts are checked, after `filter` (the CLI's --shard); the others are left out. */
  select?: (op: OpDescriptor) => boolean;
  /**
   * Given the files the ops' bundle is built from (the checked file first, then what it imports,
   * from the bundler's own list), whether the ops must be checked (the CLI's --changed-since);
   * false leaves every op of the file out. Without a bundle (it failed) the ops are checked.
   */
  inputsChanged?: (inputs: readonly string[]) => boolean;
  /** Told how many ops `filter`, `select` or `inputsChanged` left out, and which of them did. */
  onSkipped?: (count: number, by: 'filter' | 'select' | 'unchanged') => void;
  /**
   * With coverage on: when given, onResult gets each op's result as soon as its verdict is
   * known, and this gets the same op's result again once its coverage is there (the returned
   * results carry it too). Without it, onResult waits for the coverage.
   */
  onCoverage?: (result: OpResult) => void;
  /** Collect coverage in this call (default true; only a Checker made with `coverage` can). */
  coverage?: boolean;
}
