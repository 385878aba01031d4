// @ts-check
// The capture worklet: copies the input, channel by channel, into blocks and hands each full
// block to the analysis worker over a MessagePort, transferring its buffer. No arithmetic on the
// samples and no allocation per quantum: the blocks come from a fixed pool that the worker
// sends back once it has used them. When the pool is empty (the worker fell behind), the
// quantum is dropped and counted, and the count travels with the next block.

/** Frames per block sent to the worker (about 21 ms at 48 kHz). */
const BLOCK_FRAMES = 1024;
/** Blocks in flight at most (about 0.7 s at 48 kHz) before quanta are dropped. */
const POOL_BLOCKS = 32;

class CaptureProcessor extends AudioWorkletProcessor {
  /** @param {{ processorOptions: { channels: number } }} options */
  constructor(options) {
    super();
    this.channels = Math.max(1, options.processorOptions.channels | 0);
    /** @type {Float32Array[]} each holds BLOCK_FRAMES × channels samples, channel-major */
    this.pool = [];
    for (let i = 0; i < POOL_BLOCKS; i += 1) this.pool.push(new Float32Array(BLOCK_FRAMES * this.channels));
    /** @type {Float32Array | null} */
    this.current = null;
    this.filled = 0;
    this.droppedFrames = 0;
    /** @type {MessagePort | null} */
    this.worker = null;
    this.port.onmessage = (event) => {
      const msg = event.data;
      if (msg.type === 'connect') {
        this.worker = msg.port;
        // Used blocks come back from the worker and are reused.
        this.worker.onmessage = (back) => { if (back.data.type === 'return') this.pool.push(back.data.block); };
      }
    };
  }

  /** @param {Float32Array[][]} inputs */
  process(inputs) {
    const input = inputs[0];
    if (!this.worker || !input || input.length === 0) return true;
    const frames = input[0].length;
    if (!this.current) {
      this.current = this.pool.pop() ?? null;
      this.filled = 0;
      if (!this.current) {
        this.droppedFrames += frames;
        return true;
      }
    }
    const block = this.current;
    const take = Math.min(frames, BLOCK_FRAMES - this.filled);
    for (let c = 0; c < this.channels; c += 1) {
      // A channel the source does not deliver reads as silence; the page reports the count.
      const source = input[c] ?? input[0];
      block.set(take === frames ? source : source.subarray(0, take), c * BLOCK_FRAMES + this.filled);
    }
    this.filled += take;
    // 128-frame quanta divide BLOCK_FRAMES; other quantum sizes lose the remainder, counted.
    this.droppedFrames += frames - take;
    if (this.filled === BLOCK_FRAMES) {
      this.worker.postMessage(
        { type: 'block', block, frames: BLOCK_FRAMES, channels: this.channels, droppedFrames: this.droppedFrames, time: currentTime },
        [block.buffer],
      );
      this.current = null;
    }
    return true;
  }
}

registerProcessor('noisesonde-capture', CaptureProcessor);
