/**
 * Seeded pseudo-random numbers for the simulator. The model draws every random number from one of
 * these, so the same seed gives the same run, bit for bit (no Math.random, no wall clock).
 */

/** A seeded generator: mulberry32 for uniforms, Box–Muller for normals. */
export class SeededRng {
  private state: number;
  private spareNormal: number | null = null;

  constructor(seed: number) {
    // Any integer seed; the xor keeps seed 0 from being a fixed point of the mixer.
    this.state = (Math.trunc(seed) ^ 0x9e3779b9) >>> 0;
  }

  /** A uniform number in [0, 1). */
  next(): number {
    this.state = (this.state + 0x6d2b79f5) >>> 0;
    let t = this.state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }

  /** A uniform number in [lo, hi). */
  uniform(lo: number, hi: number): number {
    return lo + (hi - lo) * this.next();
  }

  /** A normal deviate with the given mean and standard deviation (same unit as both). */
  normal(mean = 0, sd = 1): number {
    if (this.spareNormal !== null) {
      const z = this.spareNormal;
      this.spareNormal = null;
      return mean + sd * z;
    }
    const u1 = Math.max(this.next(), 1e-12);
    const u2 = this.next();
    const r = Math.sqrt(-2 * Math.log(u1));
    this.spareNormal = r * Math.sin(2 * Math.PI * u2);
    return mean + sd * r * Math.cos(2 * Math.PI * u2);
  }

  /** An exponential deviate with the given mean (same unit as the mean). */
  exponential(mean: number): number {
    return -mean * Math.log(Math.max(1 - this.next(), 1e-12));
  }

  /** A child generator whose stream does not depend on how many numbers this one has drawn later. */
  fork(salt: number): SeededRng {
    return new SeededRng((Math.imul(this.state ^ salt, 0x85ebca6b) ^ (salt << 7)) >>> 0);
  }
}

/** A 32-bit seed from a string (FNV-1a), so a controller's serial gives it a stable stream. */
export function seedFromString(text: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}
