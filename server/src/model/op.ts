// What discovery finds in a source file: sample specs, annotation problems with their quick fixes,
// and the op descriptors the engine checks. Plain JSON-serialisable data (it crosses into the sandbox).

/** Element types of `@sample` specs (docs/annotations.md, "@sample PARAM SPEC"). */
export type SampleDtype = 'f64' | 'f32' | 'num' | 'i32' | 'int';

/** A parsed `@sample` spec. */
export type SampleSpec =
  | {
      kind: 'random';
      dtype: SampleDtype;
      /** [] for a plain `num` or `int`; [d1, d2, ...] otherwise. */
      shape: number[];
      /** Inclusive range; default [-1, 1]. */
      range: [number, number];
      /** Points every element keeps away from (kinks, poles). */
      avoid: number[];
      /** Drawn but not differentiated (`fixed` keyword). */
      fixed: boolean;
    }
  | { kind: 'literal'; value: unknown };

/** A 1-based position in a source file. */
export interface SourcePosition {
  line: number;
  column: number;
}

/** An annotation or set-up mistake, pointing at the offending tag (1-based). */
export interface Problem extends SourcePosition {
  message: string;
  endLine?: number;
  endColumn?: number;
  /**
   * The fixes the editor can offer as quick fixes, the likeliest first (a misspelt backward can
   * be renamed or created). Discovery fills it where it makes the problem; nothing reads a fix
   * back out of the message.
   */
  fixes?: ProblemFix[];
}

/**
 * What would repair a problem: replace its range with a word (a did-you-mean), add the missing
 * `@sample` lines of the op, or create the named function (a missing backward) as a stub.
 */
export type ProblemFix = { kind: 'replace'; text: string } | { kind: 'add-samples' } | { kind: 'create-function'; name: string };

/** One JSDoc tag of an op, with its place (for diagnostics and related information). */
export interface TagLocation extends SourcePosition {
  tag: string; // 'backward', 'sample', ...
  /** For `@sample`: the parameter it draws (e.g. `x`, `this.weight`). */
  param?: string;
  endLine: number;
  endColumn: number;
}

/** One parameter of the forward, or a `this.FIELD` of a method op. */
export interface ParamDescriptor {
  /** Parameter name, or `this.FIELD` for a field of the instance. */
  name: string;
  isField: boolean;
  /** Absent when the op uses `@samples FACTORY`, or for a parameter with a default value. */
  sample?: SampleSpec;
  /**
   * The parameter has a default value (or is optional) and no `@sample`: it is passed as
   * `undefined`, so its default applies, and it is not differentiated.
   */
  hasDefault?: boolean;
  /**
   * The declared type is a TensorFlow.js tensor (or the parameter is an input of a
   * `customGrad` function): the forward receives a float32 tensor of the sampled shape, made
   * with the module's own copy of the library.
   */
  tensor?: boolean;
}

/** One argument the backward receives, in order. */
export type BackwardArg =
  | { kind: 'param'; name: string } // a forward parameter (or `this.FIELD`), by name
  | { kind: 'output' } // `$y`: the forward's output at the sample point
  | { kind: 'upstream' } // `$dy`: the upstream gradient
  | { kind: 'tangent'; name: string } // `$dNAME` (@tangent): the tangent of parameter NAME
  | { kind: 'vector' }; // `$v` (@hessian): the vector of a Hessian-vector product

/**
 * The binding under which the sandbox exposes a module's anonymous default export
 * (`export default function (x) {}`): OpTarget.forwardName of such an op.
 */
export const DEFAULT_EXPORT_BINDING = '__gradientProbeDefault';

/** How the sandbox finds an op's functions in the module it evaluated. */
export interface OpTarget {
  kind: 'function' | 'method';
  /** Top-level binding of the forward (function), or the method name (method). */
  forwardName: string;
  /** The class binding, for methods. */
  className?: string;
  /**
   * For a function held by a top-level object literal (`export const ops = { f(x) {} }`): the
   * object's binding. The forward is `object[forwardName]`, called with `this` = the object, and
   * `backwardIsMethod` means the backward is another function of the same object.
   */
  objectName?: string;
  /** Top-level binding, or a method of the same class when the forward is a method. */
  backwardName: string;
  /** Whether the backward is a method of the class (called on the same instance). */
  backwardIsMethod: boolean;
  /**
   * The class (or a same-file ancestor) declares `#private` members, whose state the engine
   * cannot snapshot: each backward call gets a fresh instance on which the forward ran.
   */
  renewInstance?: boolean;
  /** `@samples FACTORY`: exported/top-level function `(random) => unknown[]`. */
  samplesFactory?: string;
  /** `@construct FACTORY`: top-level function returning the instance. */
  constructFactory?: string;
  /**
   * The TensorFlow.js module the file imports (`@tensorflow/tfjs`, ...), when the op passes
   * tensors or asks for the library's gradient: the bundle exposes that module's namespace
   * under TENSOR_LIBRARY_BINDING, so tensors are made with the user's own copy.
   */
  tensorLibrary?: string;
  /**
   * `@backward library-gradient`: no backward function; the library's own gradient call
   * (`grads`) of the forward is the backward. `backwardName` is then ''.
   */
  libraryGradient?: boolean;
}

/** Key of the tensor library's namespace among the bindings the bundle exposes. */
export const TENSOR_LIBRARY_BINDING = '__gradientProbeTensorLibrary';

/**
 * Which derivative an op's check compares with the forward: a vector-Jacobian product
 * (`@backward`), the full Jacobian (`@jacobian`), a Jacobian-vector product (`@tangent`) or the
 * Hessian / Hessian-vector product (`@hessian`). One forward with several such tags gives one op
 * (and one report entry) per tag. Absent means 'backward'.
 */
export type OpKind = 'backward' | 'jacobian' | 'tangent' | 'hessian';

/** One `@gradientField PARAM this.FIELD` tag: where the backward leaves PARAM's gradient. */
export interface GradientField {
  /** The differentiated parameter, as ParamDescriptor.name writes it (`x`, `this.W`). */
  param: string;
  /** The instance's field, without `this.` (`dW`). */
  field: string;
}

/** An annotated forward/backward pair found by discovery. */
export interface OpDescriptor {
  /** The derivative this op checks; absent means 'backward'. */
  kind?: OpKind;
  /** Absolute path of the source file. */
  file: string;
  /** Position of the forward's name (1-based), and where it ends. */
  line: number;
  column: number;
  endLine: number;
  endColumn: number;
  /**
   * Display name: `softplus`, or `Class.method` for a method; for the kinds other than
   * 'backward' followed by the tag (`reach @jacobian`), so each derivative of one forward has a
   * name of its own on every surface.
   */
  forward: string;
  /** Name of the backward as written in `@backward`. */
  backward: string;
  target: OpTarget;
  /** Forward parameters in declaration order, then `this.FIELD` entries in tag order. */
  params: ParamDescriptor[];
  /** Arguments of the backward in order (explicit list, the default, or read from its parameter names). */
  backwardArgs: BackwardArg[];
  /** Set when the default call did not fit and backwardArgs was read from the backward's parameter names. */
  backwardArgsFromNames?: true;
  /** `@fixed` names (with `@samples`). */
  fixed: string[];
  /**
   * `@gradientField PARAM this.FIELD` (a method op's @backward): the gradient of PARAM is read
   * from the instance's field after each backward call, the field set to zero before it; the
   * return value supplies only the other parameters' gradients (ignored when none is left).
   */
  gradientFields?: GradientField[];
  /** `@tolerance` override (relative). */
  tolerance?: number;
  /** `@seed` override. */
  seed?: number;
  /** Every tag of the op with its place. */
  tags: TagLocation[];
  /** Where the backward is declared, when discovery could resolve it in this file. */
  backwardLocation?: SourcePosition & { file: string };
  /**
   * For a `@hessian` op whose forward also has a `@backward` without problems: that backward
   * (name, binding, argument list). The Hessian is then checked against central differences of
   * this gradient when the gradient itself passes its check.
   */
  gradient?: { name: string; backwardName: string; backwardIsMethod: boolean; args: BackwardArg[]; gradientFields?: GradientField[] };
  /** Annotation mistakes; non-empty means the op is reported as `error` without running. */
  problems: Problem[];
}
