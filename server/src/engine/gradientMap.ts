// The gradient of a number-valued forward, computed by the op's own @backward, seen as a
// vector-valued map of the inputs: its central differences are the Hessian's columns (first
// differences of an exact gradient are far more accurate than second differences of the
// forward), so a @hessian op with a passing @backward is checked as the Jacobian of this map.

import { F64 } from './builtins';
import { ForwardMap } from './forwardMap';
import type { OpHarness } from './opHarness';
import type { OutputLayout } from './outputLayout';
import type { ParamSlot } from './paramSlot';

export class GradientMap extends ForwardMap {
  readonly outputLayout: OutputLayout;
  private readonly parts: Float64Array[] = [];
  private y: Float64Array | null = null;
  private readonly one = new F64(1);

  /** `hg` is a harness of the op whose backward is the gradient, sharing the Hessian op's sample. */
  constructor(
    private readonly hg: OpHarness,
    private readonly slots: ParamSlot[],
  ) {
    super(hg.perturbation);
    let n = 0;
    for (let s = 0; s < slots.length; s++) {
      this.parts[s] = new F64(slots[s].size);
      n += slots[s].size;
    }
    this.outputLayout = { kind: 'typed', f32: false, size: n };
    this.one[0] = 1;
  }

  /** The gradient at the current inputs, all parameters in declaration order, into dest. */
  forwardInto(dest: Float64Array | null, requireFinite: boolean): Float64Array {
    void requireFinite; // the backward's reader always requires finite gradients
    // The backward may read $y, or (a method) state its forward cached: run the forward here first.
    this.y = this.hg.forwardInto(this.y, true);
    this.hg.backwardInto(this.hg.takesUpstream ? this.one : null, this.y, this.slots, this.parts);
    const size = this.outputLayout.size;
    const out = dest ?? new F64(size);
    let o = 0;
    for (let s = 0; s < this.parts.length; s++) {
      const p = this.parts[s];
      for (let i = 0; i < p.length; i++) out[o++] = p[i];
    }
    return out;
  }
}
