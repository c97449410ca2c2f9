// The co-op's new single-axis-plus-tilt tracker mount: a pointing residual whose Jacobian the
// least-squares aiming routine uses, and the mount's aiming cost whose Hessian its Newton steps
// use. All numbers are invented.

/** Sun directions the mount is aimed at over the morning (unit-ish vectors, invented). */
const SUN = [
  { a: 0.42, b: -0.9, c: 0.61 },
  { a: 0.55, b: -0.3, c: 0.78 },
  { a: 0.63, b: 0.2, c: 0.84 },
];

/**
 * Pointing error of the mount for each of the three sun positions, for angles [tilt, azimuth].
 * @jacobian pointingJacobian
 * @tangent pointingTangent(angles, $dangles)
 * @sample angles f64[2] in [-1.2, 1.2]
 */
export function pointingResidual(angles: Float64Array): Float64Array {
  const [tilt, az] = [angles[0], angles[1]];
  return Float64Array.from(SUN.map((s) => Math.cos(tilt) * s.a + Math.sin(tilt) * Math.cos(az - s.b) - s.c));
}

/** 3×2 Jacobian: one row per sun position, columns d/dtilt and d/dazimuth. */
export function pointingJacobian(angles: Float64Array): number[][] {
  const [tilt, az] = [angles[0], angles[1]];
  return SUN.map((s) => [-Math.sin(tilt) * s.a + Math.cos(tilt) * Math.cos(az - s.b), -Math.sin(tilt) * Math.sin(az - s.b)]);
}

/** How the pointing errors move when the angles move by dAngles (forward mode, J·dAngles). */
export function pointingTangent(angles: Float64Array, dAngles: Float64Array): Float64Array {
  return Float64Array.from(pointingJacobian(angles).map((row) => row[0] * dAngles[0] + row[1] * dAngles[1]));
}

/**
 * Aiming cost: stay near the preferred angles, with a coupling of tilt and azimuth.
 * @backward aimingCostGrad
 * @hessian aimingCostHessian
 * @sample angles f64[2] in [-1.2, 1.2]
 */
export function aimingCost(angles: Float64Array): number {
  const [tilt, az] = [angles[0], angles[1]];
  return (tilt - 0.6) ** 2 + 0.8 * (az - 0.2) ** 2 + 0.5 * tilt * Math.sin(az);
}

export function aimingCostGrad(angles: Float64Array, dy: number): Float64Array {
  const [tilt, az] = [angles[0], angles[1]];
  return Float64Array.of(dy * (2 * (tilt - 0.6) + 0.5 * Math.sin(az)), dy * (1.6 * (az - 0.2) + 0.5 * tilt * Math.cos(az)));
}

export function aimingCostHessian(angles: Float64Array): number[][] {
  const [tilt, az] = [angles[0], angles[1]];
  return [
    [2, 0.5 * Math.cos(az)],
    // DEMO BUG: the mixed term below the diagonal differentiates sin(az) as -sin(az) (it is cos(az)).
    [-0.5 * Math.sin(az), 1.6 - 0.5 * tilt * Math.sin(az)],
  ];
}
