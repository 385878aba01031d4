// Test signals for the page's end-to-end tests, written as files the page (or Chromium's fake
// capture device) reads. The outside truth for their levels is arithmetic on the values written.
import { writeFileSync } from 'node:fs';

/**
 * A mono 16-bit PCM WAV (RIFF layout per the 1991 Multimedia Programming Interface spec).
 * Samples are in full-scale units (±1), rounded to the nearest code and clipped.
 * @param {string} path @param {ArrayLike<number>} samples @param {number} rate
 */
export function writeWav(path, samples, rate) {
  const data = Buffer.alloc(samples.length * 2);
  for (let i = 0; i < samples.length; i += 1) {
    data.writeInt16LE(Math.max(-32768, Math.min(32767, Math.round(samples[i] * 32768))), i * 2);
  }
  const header = Buffer.alloc(44);
  header.write('RIFF', 0); header.writeUInt32LE(36 + data.length, 4); header.write('WAVE', 8);
  header.write('fmt ', 12); header.writeUInt32LE(16, 16); header.writeUInt16LE(1, 20); header.writeUInt16LE(1, 22);
  header.writeUInt32LE(rate, 24); header.writeUInt32LE(rate * 2, 28); header.writeUInt16LE(2, 32); header.writeUInt16LE(16, 34);
  header.write('data', 36); header.writeUInt32LE(data.length, 40);
  writeFileSync(path, Buffer.concat([header, data]));
}

/** Gaussian noise of standard deviation 1 from a seeded generator (LCG + Box–Muller). */
export function gaussian(seed) {
  let state = seed >>> 0;
  const uniform = () => {
    state = (Math.imul(state, 1664525) + 1013904223) >>> 0; // Numerical Recipes LCG
    return (state + 0.5) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
}

/**
 * tone_amplitude·sin(2π f t) + noise of standard deviation noise_sd, `seconds` long.
 * A whole number of tone periods fits the file, so the looped capture has no phase jump.
 */
export function toneAndNoise({ rate, seconds, frequencyHz, amplitude, noiseSd, seed = 1 }) {
  const n = Math.round(rate * seconds);
  const noise = gaussian(seed);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i += 1) out[i] = amplitude * Math.sin(2 * Math.PI * frequencyHz * i / rate) + noiseSd * noise();
  return out;
}
