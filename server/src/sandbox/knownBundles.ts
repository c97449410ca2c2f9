// Which bundles a runner already holds, so the pool sends a bundle's code only once per runner:
// a small least-recently-used set that mirrors the runner's own cache.

/** Bundles a runner is assumed to hold; mirrors the runner's own cache size. */
const KNOWN_BUNDLES_PER_RUNNER = 32;

export class KnownBundles {
  private readonly keys = new Map<string, true>();

  /** Records that the runner now holds `key`; true when it held it already (no code to send). */
  remember(key: string): boolean {
    const known = this.keys.delete(key);
    this.keys.set(key, true);
    while (this.keys.size > KNOWN_BUNDLES_PER_RUNNER) {
      const oldest = this.keys.keys().next().value;
      if (oldest === undefined) break;
      this.keys.delete(oldest);
    }
    return known;
  }

  /** The runner reports it no longer holds `key` (its own cache let it go): send the code again. */
  forget(key: string): void {
    this.keys.delete(key);
  }
}
