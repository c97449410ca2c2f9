// Jacobians, tangents and Hessians of the Quillmere Glasshouse controller (fictional): the
// vent-arm linkage that opens the roof panels, the misting-line pressure model and the
// heating cost the night scheduler minimises. Part of the labelled accuracy corpus
// (labels.json); each wrong derivative says what is wrong in a `BUG (labelled)` comment.

const ARM_A = 1.3; // roof-panel arm, inner link (m)
const ARM_B = 0.8; // outer link (m)

/**
 * Where the tip of the vent arm sits for its two joint angles (a planar two-link linkage).
 * @jacobian ventArmJacobian
 * @tangent ventArmTangent(q, $dq)
 * @sample q f64[2] in [-3, 3]
 */
export function ventArm(q: Float64Array): Float64Array {
  return Float64Array.of(ARM_A * Math.cos(q[0]) + ARM_B * Math.cos(q[0] + q[1]), ARM_A * Math.sin(q[0]) + ARM_B * Math.sin(q[0] + q[1]));
}

export function ventArmJacobian(q: Float64Array): number[][] {
  const s1 = Math.sin(q[0]);
  const c1 = Math.cos(q[0]);
  const s12 = Math.sin(q[0] + q[1]);
  const c12 = Math.cos(q[0] + q[1]);
  return [
    [-ARM_A * s1 - ARM_B * s12, -ARM_B * s12],
    [ARM_A * c1 + ARM_B * c12, ARM_B * c12],
  ];
}

export function ventArmTangent(q: Float64Array, dq: Float64Array): Float64Array {
  const J = ventArmJacobian(q);
  return Float64Array.of(J[0][0] * dq[0] + J[0][1] * dq[1], J[1][0] * dq[0] + J[1][1] * dq[1]);
}

/**
 * The same linkage with a wrong Jacobian entry and a tangent that drops a term.
 * @jacobian shadeArmJacobian
 * @tangent shadeArmTangent(q, $dq)
 * @sample q f64[2] in [-3, 3]
 */
export function shadeArm(q: Float64Array): Float64Array {
  return ventArm(q);
}

export function shadeArmJacobian(q: Float64Array): number[][] {
  const J = ventArmJacobian(q);
  // BUG (labelled): the outer link's term is missing from J[1, 0].
  J[1][0] = ARM_A * Math.cos(q[0]);
  return J;
}

export function shadeArmTangent(q: Float64Array, dq: Float64Array): Float64Array {
  const J = ventArmJacobian(q);
  // BUG (labelled): the second joint's term is missing from the height.
  return Float64Array.of(J[0][0] * dq[0] + J[0][1] * dq[1], J[1][0] * dq[0]);
}

/**
 * Misting-line pressures along three nozzles: p_i = Σ_j R_ij·tanh(u_j) (a square map whose
 * Jacobian is far from symmetric).
 * @jacobian mistPressureJacobian
 * @sample u f64[3]
 */
export function mistPressure(u: Float64Array): Float64Array {
  return Float64Array.from(MIST_R.map((row) => row.reduce((s, r, j) => s + r * Math.tanh(u[j]), 0)));
}
const MIST_R = [[1.0, 0.4, 0.0], [0.0, 1.2, 0.7], [0.9, 0.0, 0.6]];

export function mistPressureJacobian(u: Float64Array): Float64Array {
  const out = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) out[i * 3 + j] = MIST_R[i][j] * (1 - Math.tanh(u[j]) ** 2);
  return out;
}

/**
 * The same misting map with its Jacobian written out column by column.
 * @jacobian mistFlowJacobian
 * @sample u f64[3]
 */
export function mistFlow(u: Float64Array): Float64Array {
  return mistPressure(u);
}

export function mistFlowJacobian(u: Float64Array): Float64Array {
  const out = new Float64Array(9);
  // BUG (labelled): transposed — rows indexed by the input, columns by the output.
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) out[j * 3 + i] = MIST_R[i][j] * (1 - Math.tanh(u[j]) ** 2);
  return out;
}

/**
 * Night heating cost of two zone setpoints (a coupled quadratic plus a soft limit).
 * @backward heatCostGrad
 * @hessian heatCostHessian
 * @sample t f64[2] in [-2, 2]
 */
export function heatCost(t: Float64Array): number {
  return 1.5 * t[0] ** 2 + 0.6 * t[0] * t[1] + t[1] ** 2 + Math.exp(0.5 * t[1]);
}

export function heatCostGrad(t: Float64Array, dy: number): Float64Array {
  return Float64Array.of(dy * (3 * t[0] + 0.6 * t[1]), dy * (0.6 * t[0] + 2 * t[1] + 0.5 * Math.exp(0.5 * t[1])));
}

export function heatCostHessian(t: Float64Array): number[][] {
  return [
    [3, 0.6],
    [0.6, 2 + 0.25 * Math.exp(0.5 * t[1])],
  ];
}

/**
 * The same cost with a Hessian that is not symmetric; no backward tag, so second differences.
 * @hessian boilerCostHessian
 * @sample t f64[2] in [-2, 2]
 */
export function boilerCost(t: Float64Array): number {
  return heatCost(t);
}

export function boilerCostHessian(t: Float64Array): number[][] {
  return [
    [3, 0.6],
    // BUG (labelled): the mixed term is written 0.3 below the diagonal (not symmetric).
    [0.3, 2 + 0.25 * Math.exp(0.5 * t[1])],
  ];
}

/**
 * The scheduler's Hessian-vector product of the heating cost (second differences).
 * @hessian nightCostHvp(t, $v)
 * @sample t f64[2] in [-2, 2]
 */
export function nightCost(t: Float64Array): number {
  return heatCost(t);
}

export function nightCostHvp(t: Float64Array, v: Float64Array): Float64Array {
  const H = heatCostHessian(t);
  return Float64Array.of(H[0][0] * v[0] + H[0][1] * v[1], H[1][0] * v[0] + H[1][1] * v[1]);
}

/**
 * Its twin, whose product forgets the soft limit's curvature.
 * @hessian dawnCostHvp(t, $v)
 * @sample t f64[2] in [-2, 2]
 */
export function dawnCost(t: Float64Array): number {
  return heatCost(t);
}

export function dawnCostHvp(_t: Float64Array, v: Float64Array): Float64Array {
  // BUG (labelled): 0.25·exp(t1/2) missing from H[1, 1].
  return Float64Array.of(3 * v[0] + 0.6 * v[1], 0.6 * v[0] + 2 * v[1]);
}

/**
 * Vent opening clipped at fully closed: the Jacobian of relu, sampled exactly on the corner.
 * @jacobian ventClipJacobian
 * @samples closedVents
 */
export function ventClip(u: Float64Array): Float64Array {
  return u.map((v) => Math.max(0, v));
}

/** Every vent exactly at the corner of the clip. */
export function closedVents(): unknown[] {
  return [new Float64Array(3)];
}

export function ventClipJacobian(u: Float64Array): number[][] {
  return Array.from(u, (_, i) => Array.from(u, (v, j) => (i === j && v > 0 ? 1 : 0)));
}

/**
 * A squared one-sided penalty whose curvature jumps at 0, sampled exactly there.
 * @hessian frostPenaltyHessian
 * @samples frostLine
 */
export function frostPenalty(t: Float64Array): number {
  return Math.max(0, t[0]) ** 2 + Math.max(0, t[1]) ** 2;
}

/** Both zones exactly at the frost line. */
export function frostLine(): unknown[] {
  return [new Float64Array(2)];
}

export function frostPenaltyHessian(t: Float64Array): number[][] {
  return [
    [t[0] > 0 ? 2 : 0, 0],
    [0, t[1] > 0 ? 2 : 0],
  ];
}

/**
 * A Jacobian of the wrong shape (3×2 for 2 outputs and 3 inputs).
 * @jacobian louvreJacobian
 * @sample u f64[3]
 */
export function louvre(u: Float64Array): Float64Array {
  return Float64Array.of(u[0] * u[1], u[2]);
}

export function louvreJacobian(u: Float64Array): number[][] {
  return [[u[1], 0], [u[0], 0], [0, 1]];
}
