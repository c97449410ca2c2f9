// Draws the extension's icon (client/marketplace/icon.png, 256×256) with no image library: a
// dark rounded tile, log-log axes, the V of a correct gradient's error against step size and a
// flat line of a wrong one. `node tools/draw-icon.mjs` rewrites the file; the PNG is committed.
import { writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { deflateSync } from 'node:zlib';

const SIZE = 256;
const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const px = new Float32Array(SIZE * SIZE * 4); // straight RGBA, 0..1

/** Blends a colour into one pixel with coverage `a`. */
function blend(x, y, [r, g, b], a) {
  if (x < 0 || y < 0 || x >= SIZE || y >= SIZE || a <= 0) return;
  const i = (y * SIZE + x) * 4;
  const da = px[i + 3];
  const oa = a + da * (1 - a);
  for (const [k, c] of [
    [0, r],
    [1, g],
    [2, b],
  ])
    px[i + k] = oa > 0 ? (c * a + px[i + k] * da * (1 - a)) / oa : 0;
  px[i + 3] = oa;
}

/** Fills pixels by coverage from a signed distance (negative inside), anti-aliased over one pixel. */
function fill(distance, colour) {
  for (let y = 0; y < SIZE; y++) {
    for (let x = 0; x < SIZE; x++) {
      const d = distance(x + 0.5, y + 0.5);
      blend(x, y, colour, Math.max(0, Math.min(1, 0.5 - d)));
    }
  }
}

/** Distance from a point to a segment. */
function segment(px0, py0, ax, ay, bx, by) {
  const dx = bx - ax;
  const dy = by - ay;
  const t = Math.max(0, Math.min(1, ((px0 - ax) * dx + (py0 - ay) * dy) / (dx * dx + dy * dy)));
  return Math.hypot(px0 - ax - t * dx, py0 - ay - t * dy);
}

/** A polyline of the given width. */
function stroke(points, width, colour) {
  fill((x, y) => {
    let d = Infinity;
    for (let i = 1; i < points.length; i++) d = Math.min(d, segment(x, y, ...points[i - 1], ...points[i]));
    return d - width / 2;
  }, colour);
}

// The tile: a rounded square.
const R = 44;
fill(
  (x, y) => {
    const qx = Math.abs(x - SIZE / 2) - (SIZE / 2 - 8 - R);
    const qy = Math.abs(y - SIZE / 2) - (SIZE / 2 - 8 - R);
    return Math.hypot(Math.max(qx, 0), Math.max(qy, 0)) + Math.min(Math.max(qx, qy), 0) - R;
  },
  [0.09, 0.13, 0.2],
);

// Axes.
stroke(
  [
    [56, 48],
    [56, 204],
    [212, 204],
  ],
  6,
  [0.55, 0.62, 0.72],
);
// Error in decades against log step: h from 1e-1 to 1e-13, rounding 1e-16/h plus truncation h²
// (the shape of Nocedal & Wright, 2nd ed., §8.1), drawn from e = -2 (top) to e = -11 (bottom).
const yOf = (e) => 60 + ((-2 - e) / 9) * 130;
// A wrong gradient: a flat floor well above the V's bottom.
stroke(
  [
    [66, yOf(-4.5)],
    [204, yOf(-4.5)],
  ],
  8,
  [0.93, 0.36, 0.33],
);
// A correct gradient: the V.
const v = [];
for (let i = 0; i <= 60; i++) {
  const s = i / 60;
  const h = Math.pow(10, -1 - 12 * s);
  v.push([66 + 138 * s, yOf(Math.log10(1e-16 / h + h * h))]);
}
stroke(v, 9, [0.36, 0.82, 0.55]);

// Encode as PNG (RGBA 8-bit, no interlace).
const raw = Buffer.alloc(SIZE * (SIZE * 4 + 1));
for (let y = 0; y < SIZE; y++) {
  raw[y * (SIZE * 4 + 1)] = 0;
  for (let x = 0; x < SIZE * 4; x++) raw[y * (SIZE * 4 + 1) + 1 + x] = Math.round(Math.max(0, Math.min(1, px[y * SIZE * 4 + x])) * 255);
}
const crcTable = Array.from({ length: 256 }, (_, n) => {
  let c = n;
  for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
  return c >>> 0;
});
function crc32(buf) {
  let c = 0xffffffff;
  for (const b of buf) c = crcTable[(c ^ b) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}
function chunk(type, data) {
  const len = Buffer.alloc(4);
  len.writeUInt32BE(data.length);
  const body = Buffer.concat([Buffer.from(type, 'ascii'), data]);
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(body));
  return Buffer.concat([len, body, crc]);
}
const header = Buffer.alloc(13);
header.writeUInt32BE(SIZE, 0);
header.writeUInt32BE(SIZE, 4);
header[8] = 8; // bit depth
header[9] = 6; // RGBA
const png = Buffer.concat([
  Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
  chunk('IHDR', header),
  chunk('IDAT', deflateSync(raw, { level: 9 })),
  chunk('IEND', Buffer.alloc(0)),
]);
const out = join(root, 'client', 'marketplace', 'icon.png');
writeFileSync(out, png);
console.log(`${out} (${png.length} bytes)`);
