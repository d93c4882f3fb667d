/**
 * Procedural seabed survey tiles for the demo team: what a towed camera on a low-bandwidth underwater
 * link would send as thumbnails. Four scenes (sand ripples, a rock field, a pipeline crossing, silt haze),
 * each drawn from a seed, so training and held-out sets are different images of the same kinds of scene.
 * Output is 8-bit interleaved RGB; turn it into PNG with sharp.
 */
export type SeabedScene = 'sand-ripples' | 'rock-field' | 'pipeline-crossing' | 'silt-haze';
export const seabedScenes: readonly SeabedScene[] = ['sand-ripples', 'rock-field', 'pipeline-crossing', 'silt-haze'];

export interface SeabedTile {
  scene: SeabedScene;
  width: number;
  height: number;
  rgb: Uint8Array; // height × width × 3, row-major
}

/** mulberry32: a small, well-mixed 32-bit generator; plenty for textures. */
function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Smooth value noise on a lattice of the given cell size, bilinear with a smoothstep fade. */
function valueNoise(width: number, height: number, cell: number, random: () => number): Float32Array {
  const gw = Math.ceil(width / cell) + 2;
  const gh = Math.ceil(height / cell) + 2;
  const grid = new Float32Array(gw * gh);
  for (let i = 0; i < grid.length; i++) grid[i] = random();
  const out = new Float32Array(width * height);
  const fade = (t: number) => t * t * (3 - 2 * t);
  for (let y = 0; y < height; y++) {
    const gy = y / cell;
    const y0 = Math.floor(gy);
    const fy = fade(gy - y0);
    for (let x = 0; x < width; x++) {
      const gx = x / cell;
      const x0 = Math.floor(gx);
      const fx = fade(gx - x0);
      const a = grid[y0 * gw + x0];
      const b = grid[y0 * gw + x0 + 1];
      const c = grid[(y0 + 1) * gw + x0];
      const d = grid[(y0 + 1) * gw + x0 + 1];
      out[y * width + x] = (a * (1 - fx) + b * fx) * (1 - fy) + (c * (1 - fx) + d * fx) * fy;
    }
  }
  return out;
}

function fractalNoise(width: number, height: number, random: () => number, baseCell: number, octaves: number): Float32Array {
  const out = new Float32Array(width * height);
  let amplitude = 1;
  let total = 0;
  for (let o = 0; o < octaves; o++) {
    const layer = valueNoise(width, height, Math.max(1, baseCell / 2 ** o), random);
    for (let i = 0; i < out.length; i++) out[i] += amplitude * layer[i];
    total += amplitude;
    amplitude /= 2;
  }
  for (let i = 0; i < out.length; i++) out[i] /= total;
  return out;
}

const clamp = (v: number) => (v < 0 ? 0 : v > 255 ? 255 : Math.round(v));

/** Water colour: light falls off and shifts to blue-green with depth; `shade` in [0, 1]. */
function tint(shade: number, depth: number): [number, number, number] {
  const s = Math.max(0, Math.min(1, shade));
  return [40 + 150 * s * (1 - depth * 0.5), 70 + 140 * s, 80 + 110 * s + 30 * depth];
}

export function seabedTile(scene: SeabedScene, seed: number, width = 128, height = 96): SeabedTile {
  const random = rng(seed * 2654435761 + seabedScenes.indexOf(scene));
  const grain = fractalNoise(width, height, random, 6, 3);
  const broad = fractalNoise(width, height, random, 40, 2);
  const rgb = new Uint8Array(width * height * 3);
  const depth = 0.2 + 0.6 * random();
  const angle = random() * Math.PI;
  const wavelength = 7 + 9 * random();
  const ca = Math.cos(angle);
  const sa = Math.sin(angle);

  // Rocks: discs with a soft shadow on the side away from the (camera-mounted) light.
  const rocks: { x: number; y: number; r: number }[] = [];
  if (scene === 'rock-field') {
    const count = 8 + Math.floor(random() * 14);
    for (let i = 0; i < count; i++) rocks.push({ x: random() * width, y: random() * height, r: 3 + random() * 12 });
  }
  // Pipeline: a straight band across the tile with a cylindrical highlight.
  const px = random() * width;
  const py = random() * height;
  const pipeAngle = random() * Math.PI;
  const pipeHalf = 5 + random() * 6;
  const pn = [-Math.sin(pipeAngle), Math.cos(pipeAngle)];

  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      let shade = 0.45 + 0.25 * (broad[i] - 0.5) + 0.2 * (grain[i] - 0.5);
      if (scene === 'sand-ripples' || scene === 'pipeline-crossing') {
        const u = (x * ca + y * sa) / wavelength + 0.8 * broad[i];
        // Ripples are asymmetric: a long stoss slope and a short lee face.
        const phase = u - Math.floor(u);
        shade += 0.18 * (phase < 0.7 ? phase / 0.7 : (1 - phase) / 0.3) - 0.09;
      }
      if (scene === 'rock-field') {
        for (const rock of rocks) {
          const dx = x - rock.x;
          const dy = y - rock.y;
          const d = Math.sqrt(dx * dx + dy * dy) / rock.r;
          if (d < 1) shade = 0.25 + 0.35 * (1 - d) * (0.6 + 0.4 * grain[i]) - 0.15 * (dx + dy) / (2 * rock.r);
          else if (d < 1.4 && dx + dy > 0) shade *= 0.75 + 0.25 * (d - 1) / 0.4;
        }
      }
      if (scene === 'pipeline-crossing') {
        const dist = (x - px) * pn[0] + (y - py) * pn[1];
        if (Math.abs(dist) < pipeHalf) {
          const t = dist / pipeHalf;
          shade = 0.3 + 0.5 * Math.sqrt(1 - t * t) * (0.8 + 0.2 * grain[i]) - 0.15 * t;
        } else if (dist > pipeHalf && dist < pipeHalf * 2.2) {
          shade *= 0.7; // scour shadow beside the pipe
        }
      }
      if (scene === 'silt-haze') {
        // Suspended silt: a bright, low-contrast veil that varies slowly.
        shade = 0.55 + 0.35 * (shade - 0.45) + 0.25 * broad[i];
      }
      const [r, g, b] = tint(shade, depth);
      rgb[i * 3] = clamp(r);
      rgb[i * 3 + 1] = clamp(g);
      rgb[i * 3 + 2] = clamp(b);
    }
  }
  return { scene, width, height, rgb };
}

/** `count` tiles cycling through the scenes, seeded from `seed` (different seeds → different sets). */
export function seabedSet(seed: number, count: number, width = 128, height = 96): SeabedTile[] {
  const tiles: SeabedTile[] = [];
  for (let k = 0; k < count; k++) tiles.push(seabedTile(seabedScenes[k % seabedScenes.length], seed * 1000 + k, width, height));
  return tiles;
}
