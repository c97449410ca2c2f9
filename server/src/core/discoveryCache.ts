// The Checker's discovery results of the files it checked, reused while a file's text is the same.
// Discovery is a pure function of the path and the text (one TypeScript parse, no other file
// read: discovery/index.ts), so an entry is reused only when the text is equal, character for
// character, to the text it was made from; any edit parses again. Measured: parsing a ~100-line
// bench op file took ~1 ms of the ~1.5–3.5 ms a warm check spent outside its runner.
import type { DiscoveryResult } from '../discovery/index';
import { listOps, type OpListing } from './opListing';

/** Files kept (our choice: the files of a workspace a user edits at once, with margin). */
export const DISCOVERY_CACHE_FILES = 64;

/**
 * Characters of source text kept at most (~8 MiB of UTF-16, besides the results): the language
 * server lives for hours. A file longer than this is parsed every time and not kept.
 */
export const DISCOVERY_CACHE_CHARS = 4 * 1024 * 1024;

export interface DiscoveryCacheStats {
  /** Listings answered from the cache (same path, equal text). */
  hits: number;
  /** Listings that parsed. */
  parses: number;
}

interface Entry {
  text: string;
  result: DiscoveryResult;
}

export class DiscoveryCache {
  readonly stats: DiscoveryCacheStats = { hits: 0, parses: 0 };
  private readonly entries = new Map<string, Entry>();
  private chars = 0;

  /**
   * The ops of `abs` (an absolute path) with this text. Each call gets its own copy, so a caller
   * that changes a result it was given (or the problems an OpResult carries) changes no cache entry.
   */
  list(abs: string, text: string): OpListing {
    const hit = this.entries.get(abs);
    if (hit && hit.text === text) {
      this.stats.hits++;
      // Most recently used last: the oldest goes first.
      this.entries.delete(abs);
      this.entries.set(abs, hit);
      return { file: abs, ...structuredClone(hit.result) };
    }
    this.stats.parses++;
    const listing = listOps(abs, text);
    this.forget(abs);
    if (text.length <= DISCOVERY_CACHE_CHARS) {
      this.entries.set(abs, { text, result: structuredClone({ ops: listing.ops, fileProblems: listing.fileProblems }) });
      this.chars += text.length;
      this.evict();
    }
    return listing;
  }

  private evict(): void {
    while (this.entries.size > DISCOVERY_CACHE_FILES || this.chars > DISCOVERY_CACHE_CHARS) {
      const oldest = this.entries.keys().next().value;
      if (oldest === undefined) break;
      this.forget(oldest);
    }
  }

  private forget(abs: string): void {
    const entry = this.entries.get(abs);
    if (!entry) return;
    this.entries.delete(abs);
    this.chars -= entry.text.length;
  }
}
