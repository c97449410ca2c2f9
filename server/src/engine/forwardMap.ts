// The perturbation side of finite differences: a map of the op's inputs evaluated with
// parameters moved, and the record of where they are for messages about a failing call.

import type { OutputLayout } from './outputLayout';
import type { ParamSlot } from './paramSlot';
import type { TimeLimitStop } from '../model/types';

/** Where the parameters currently are, for messages about a failing forward call. */
export interface PerturbationState {
  slot: ParamSlot | null;
  index: number;
  value: number;
  /** Several elements moved together (grouped or directional perturbation). */
  several: boolean;
  /**
   * How far the running phase has got, for the engine's hard stop between calls
   * (OpHarness.stopAfter) to report like the phase's own stop would; `unit` names what is
   * counted in the message. Absent outside such a phase.
   */
  progress?: Omit<TimeLimitStop, 'timeLimitMs'> & { unit: string };
}

/**
 * What finite differences need: a vector-valued map evaluated at the current inputs, its output
 * layout, and the perturbation helpers. An OpHarness is one; so is the gradient of a @hessian op
 * (engine/gradientMap.ts). The helpers are the one place that moves parameters, records where they
 * are (for messages about a failing call), calls the map and puts the parameters back, also when
 * the call throws.
 */
export abstract class ForwardMap {
  constructor(readonly perturbation: PerturbationState) {}

  /** Evaluates the map at the current inputs into dest (allocated when null) and returns it. */
  abstract forwardInto(dest: Float64Array | null, requireFinite: boolean): Float64Array;

  /** The output's layout (fixed by the first evaluation). */
  abstract get outputLayout(): OutputLayout;

  /**
   * Evaluates the map into out with element i of slot set to x (as its storage rounds it), then
   * restores the element. Returns the value actually stored.
   */
  forwardAtElement(slot: ParamSlot, i: number, x: number, out: Float64Array, requireFinite: boolean): number {
    const p = this.perturbation;
    const x0 = slot.get(i);
    p.slot = slot;
    p.index = i;
    p.several = false;
    try {
      const stored = slot.set(i, x);
      p.value = stored;
      this.forwardInto(out, requireFinite);
      return stored;
    } finally {
      slot.set(i, x0);
      p.slot = null;
    }
  }

  /**
   * Evaluates the map into out after `move` has moved elements (of slot, or of several slots), and
   * calls `restore` afterwards, also when the call throws. Messages name element `index` of slot
   * when `several` is false, else say that several elements of slot moved.
   */
  forwardMoved(slot: ParamSlot, index: number, several: boolean, move: () => void, restore: () => void, out: Float64Array, requireFinite: boolean): void {
    const p = this.perturbation;
    p.slot = slot;
    p.index = index;
    p.several = several;
    try {
      move();
      if (!several) p.value = slot.get(index);
      this.forwardInto(out, requireFinite);
    } finally {
      restore();
      p.slot = null;
    }
  }
}
