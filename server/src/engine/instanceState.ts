// A snapshot of a method op's instance as the forward left it (its own fields, with the contents
// of typed arrays, arrays and nested objects), restored before every backward call, so a layer
// whose backward accumulates (`this.gradW[k] += ...`) sees the same state on every call.

import { getPrototypeOf, isArray, isView, objectKeys, ownKey, toStringTagKey } from './builtins';

/**
 * Depth to which nested objects are copied (a layer holding sub-layers holding arrays is depth
 * 3). Our choice: deep enough for framework-style layers, shallow enough to stay cheap.
 */
const MAX_DEPTH = 4;

/** What one value held: its identity and, for containers, a copy of its contents. */
type Saved =
  | { kind: 'leaf'; value: unknown }
  | { kind: 'view'; value: { [i: number]: unknown; length: number }; copy: unknown[] }
  | { kind: 'array'; value: unknown[]; items: Saved[] }
  | { kind: 'object'; value: Record<string, unknown>; keys: string[]; items: Saved[] };

/**
 * Containers copied per snapshot at most: beyond it, values keep their identity only (a layer
 * holding a list of thousands of objects is not a cache of the forward; our choice).
 */
const MAX_CONTAINERS = 2048;

function save(v: unknown, depth: number, seen: unknown[]): Saved {
  if (v === null || typeof v !== 'object') return { kind: 'leaf', value: v };
  if (seen.length >= MAX_CONTAINERS) return { kind: 'leaf', value: v };
  for (let i = 0; i < seen.length; i++) if (seen[i] === v) return { kind: 'leaf', value: v };
  if (isView(v)) {
    const arr = v as unknown as { [i: number]: unknown; length: number };
    const n = arr.length;
    if (typeof n !== 'number') return { kind: 'leaf', value: v };
    const copy: unknown[] = [];
    for (let i = 0; i < n; i++) copy[i] = arr[i];
    return { kind: 'view', value: arr, copy };
  }
  if (depth >= MAX_DEPTH) return { kind: 'leaf', value: v };
  seen[seen.length] = v;
  if (isArray(v)) {
    const items: Saved[] = [];
    for (let i = 0; i < v.length; i++) items[i] = save(v[i], depth + 1, seen);
    return { kind: 'array', value: v, items };
  }
  // Maps, Sets, Dates and the like keep their identity only: their contents are not fields.
  const proto = getPrototypeOf(v);
  if (proto !== null && !isPlainOrClassInstance(v)) return { kind: 'leaf', value: v };
  const obj = v as Record<string, unknown>;
  const keys = objectKeys(obj);
  const items: Saved[] = [];
  for (let i = 0; i < keys.length; i++) {
    let field: unknown;
    try {
      field = obj[keys[i]];
    } catch {
      field = undefined; // a getter that throws: nothing to copy, and nothing will be written back
    }
    items[i] = save(field, depth + 1, seen);
  }
  return { kind: 'object', value: obj, keys, items };
}

/** Objects whose state lives in own enumerable properties (not a built-in collection). */
function isPlainOrClassInstance(v: object): boolean {
  try {
    return (v as Record<symbol, unknown>)[toStringTagKey] === undefined;
  } catch {
    return false;
  }
}

/** Puts a saved value's contents back into the same object and returns the identity to store. */
function restore(s: Saved): unknown {
  switch (s.kind) {
    case 'leaf':
      return s.value;
    case 'view': {
      const arr = s.value;
      // A typed array cannot change its length; write the saved numbers back in place.
      for (let i = 0; i < s.copy.length; i++) arr[i] = s.copy[i];
      return arr;
    }
    case 'array': {
      const arr = s.value;
      try {
        arr.length = s.items.length;
        for (let i = 0; i < s.items.length; i++) arr[i] = restore(s.items[i]);
      } catch {
        // A frozen array cannot have changed.
      }
      return arr;
    }
    case 'object': {
      restoreOwn(s.value, s.keys, s.items);
      return s.value;
    }
  }
}

function restoreOwn(obj: Record<string, unknown>, keys: string[], items: Saved[]): void {
  // Fields added since the snapshot go, so a backward cannot leave state for the next call.
  let now: string[];
  try {
    now = objectKeys(obj);
  } catch {
    now = [];
  }
  for (let i = 0; i < now.length; i++) {
    let kept = false;
    for (let k = 0; k < keys.length; k++) if (keys[k] === now[i]) kept = true;
    if (!kept) {
      try {
        delete obj[now[i]];
      } catch {
        // A non-configurable field stays; the next backward sees it.
      }
    }
  }
  for (let i = 0; i < keys.length; i++) {
    const value = restore(items[i]);
    try {
      if (!ownKey(obj, keys[i]) || obj[keys[i]] !== value) obj[keys[i]] = value;
    } catch {
      // A read-only or accessor field: left as it is.
    }
  }
}

/** The instance's own fields as the forward left them, to put back before each backward call. */
export class InstanceSnapshot {
  private readonly saved: Saved;

  constructor(instance: Record<string, unknown>) {
    let saved: Saved;
    try {
      saved = save(instance, 0, []);
    } catch {
      saved = { kind: 'leaf', value: instance }; // an instance that cannot be read (a Proxy): nothing to restore
    }
    this.saved = saved;
  }

  /** Puts every saved field (and the contents of every saved array) back; never throws. */
  restore(): void {
    try {
      restore(this.saved);
    } catch {
      // Setters that throw: the fields that could be written back are.
    }
  }
}
