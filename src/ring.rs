//! The most recent stretch of an input stream, in fixed memory: to save "the last N seconds"
//! of a live microphone as a WAV file.
//!
//! # Method
//! A ring of `capacity_frames × channels` interleaved samples, allocated once. Pushing copies
//! the block in (in at most two pieces, where it wraps); when full, the oldest frames are
//! overwritten. Reading gives the held samples oldest first as two slices.

use std::io::Write;

use crate::io::wav_writer::{write_wav_parts, WavEncoding, WavSpec, WavWriteError, WavWritten};

/// Most samples (frames × channels) a ring may hold: 512 MiB of f64, e.g. 23 minutes of mono
/// 48 kHz audio.
pub const MAX_RING_SAMPLES: usize = 1 << 26;

/// Why a ring could not be built or fed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum RingError {
    /// The ring's size is unusable.
    #[error("a sample ring of {frames} frames × {channels} channels is out of range: use at least 1 frame and 1 channel and at most {max_samples} samples in all")]
    Size {
        /// Frames asked for.
        frames: usize,
        /// Channels asked for.
        channels: usize,
        /// Most samples in all.
        max_samples: usize,
    },
    /// A duration or rate that gives no whole number of frames.
    #[error("{duration_s} s at {sample_rate_hz} Hz is not a usable ring length: give a finite duration above 0 s and a finite rate above 0 Hz")]
    Duration {
        /// Seconds asked for.
        duration_s: f64,
        /// Rate given.
        sample_rate_hz: f64,
    },
    /// The block does not hold whole frames.
    #[error("a block of {samples} samples is not whole frames of {channels} channels; push interleaved frames")]
    PartialFrame {
        /// Samples in the block.
        samples: usize,
        /// Channels per frame.
        channels: usize,
    },
}

/// The last `capacity_frames` frames of an interleaved stream.
///
/// ```
/// use noisesonde::ring::SampleRing;
/// let mut ring = SampleRing::new(1, 4)?;
/// ring.push(&[1.0, 2.0, 3.0])?;
/// ring.push(&[4.0, 5.0, 6.0])?;
/// let (older, newer) = ring.as_slices();
/// assert_eq!([older, newer].concat(), vec![3.0, 4.0, 5.0, 6.0]);
/// assert_eq!(ring.frames_pushed(), 6);
/// # Ok::<(), noisesonde::ring::RingError>(())
/// ```
#[derive(Debug, Clone)]
pub struct SampleRing {
    channels: usize,
    data: Vec<f64>,
    /// Index in `data` of the next sample to write.
    next: usize,
    /// Valid samples (a multiple of `channels`).
    len: usize,
    frames_pushed: u64,
}

impl SampleRing {
    /// A ring of `capacity_frames` frames of `channels` samples; all memory is allocated here.
    ///
    /// # Errors
    /// [`RingError::Size`] for zero frames or channels, or more than [`MAX_RING_SAMPLES`]
    /// samples.
    pub fn new(channels: usize, capacity_frames: usize) -> Result<Self, RingError> {
        let samples = capacity_frames.checked_mul(channels);
        let Some(samples) = samples.filter(|&s| s > 0 && s <= MAX_RING_SAMPLES) else {
            return Err(RingError::Size {
                frames: capacity_frames,
                channels,
                max_samples: MAX_RING_SAMPLES,
            });
        };
        Ok(Self {
            channels,
            data: vec![0.0; samples],
            next: 0,
            len: 0,
            frames_pushed: 0,
        })
    }

    /// A ring holding the last `duration_s` seconds at `sample_rate_hz`: ⌈duration × rate⌉ frames.
    ///
    /// # Errors
    /// [`RingError::Duration`] for a duration or rate that is not finite and positive,
    /// [`RingError::Size`] as [`SampleRing::new`].
    pub fn with_duration(
        channels: usize,
        duration_s: f64,
        sample_rate_hz: f64,
    ) -> Result<Self, RingError> {
        let frames = (duration_s * sample_rate_hz).ceil();
        let usable = duration_s.is_finite()
            && duration_s > 0.0
            && sample_rate_hz.is_finite()
            && sample_rate_hz > 0.0;
        if !usable {
            return Err(RingError::Duration {
                duration_s,
                sample_rate_hz,
            });
        }
        // Beyond the cap anyway; saturate before converting so huge values give Size.
        let frames = if frames > MAX_RING_SAMPLES as f64 {
            MAX_RING_SAMPLES + 1
        } else {
            frames as usize
        };
        Self::new(channels, frames)
    }

    /// Channels per frame.
    pub fn channels(&self) -> usize {
        self.channels
    }

    /// Frames the ring can hold.
    pub fn capacity_frames(&self) -> usize {
        self.data.len() / self.channels
    }

    /// Frames held now (at most the capacity).
    pub fn len_frames(&self) -> usize {
        self.len / self.channels
    }

    /// Frames pushed since the ring was built or cleared.
    pub fn frames_pushed(&self) -> u64 {
        self.frames_pushed
    }

    /// Forgets everything held (the memory stays).
    pub fn clear(&mut self) {
        self.next = 0;
        self.len = 0;
        self.frames_pushed = 0;
    }

    /// Appends whole interleaved frames, overwriting the oldest when full. Allocates nothing.
    ///
    /// # Errors
    /// [`RingError::PartialFrame`] when `block` is not a whole number of frames; nothing is
    /// pushed.
    pub fn push(&mut self, block: &[f64]) -> Result<(), RingError> {
        if !block.len().is_multiple_of(self.channels) {
            return Err(RingError::PartialFrame {
                samples: block.len(),
                channels: self.channels,
            });
        }
        let capacity = self.data.len();
        // Only the newest `capacity` samples of the block can survive.
        let kept = &block[block.len().saturating_sub(capacity)..];
        let first = kept.len().min(capacity - self.next);
        let (head, tail) = kept.split_at(first);
        self.data[self.next..self.next + first].copy_from_slice(head);
        self.data[..tail.len()].copy_from_slice(tail);
        self.next = (self.next + kept.len()) % capacity;
        self.len = (self.len + kept.len()).min(capacity);
        self.frames_pushed += (block.len() / self.channels) as u64;
        Ok(())
    }

    /// The held samples, oldest first, as two slices (the second empty unless the ring wrapped).
    pub fn as_slices(&self) -> (&[f64], &[f64]) {
        let capacity = self.data.len();
        if self.len < capacity {
            (&self.data[..self.len], &[])
        } else {
            let (newer, older) = self.data.split_at(self.next);
            (older, newer)
        }
    }

    /// Writes the held frames as a WAV file (see [`crate::io::wav_writer`]).
    ///
    /// # Errors
    /// Any [`WavWriteError`] of [`write_wav_parts`].
    pub fn write_wav<W: Write>(
        &self,
        out: W,
        sample_rate_hz: u32,
        encoding: WavEncoding,
    ) -> Result<WavWritten, WavWriteError> {
        let channels = u16::try_from(self.channels).map_err(|_| WavWriteError::LayoutTooLarge {
            sample_rate_hz,
            channels: u16::MAX,
        })?;
        let spec = WavSpec {
            sample_rate_hz,
            channels,
            encoding,
        };
        let (older, newer) = self.as_slices();
        write_wav_parts(out, &spec, &[older, newer])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Against the obvious model: the last `capacity` samples of everything pushed.
    #[test]
    fn holds_the_last_frames_for_any_block_sizes() {
        for channels in [1usize, 2, 3] {
            for capacity in [1usize, 5, 64] {
                let mut ring = SampleRing::new(channels, capacity).unwrap();
                let before = ring.data.capacity();
                let mut all = Vec::new();
                let mut value = 0.0;
                for frames in [1usize, 3, 0, 7, 64, 200, 2, 5, 63, 1] {
                    let block: Vec<f64> = (0..frames * channels)
                        .map(|_| {
                            value += 1.0;
                            value
                        })
                        .collect();
                    ring.push(&block).unwrap();
                    all.extend_from_slice(&block);
                    let keep = all.len().min(capacity * channels);
                    let (a, b) = ring.as_slices();
                    assert_eq!([a, b].concat(), all[all.len() - keep..].to_vec());
                    assert_eq!(ring.len_frames(), keep / channels);
                    assert_eq!(ring.frames_pushed(), (all.len() / channels) as u64);
                }
                assert_eq!(ring.data.capacity(), before);
            }
        }
    }

    #[test]
    fn bad_sizes_and_partial_frames_are_errors() {
        assert!(matches!(
            SampleRing::new(0, 10),
            Err(RingError::Size { .. })
        ));
        assert!(matches!(SampleRing::new(2, 0), Err(RingError::Size { .. })));
        assert!(matches!(
            SampleRing::new(usize::MAX, 2),
            Err(RingError::Size { .. })
        ));
        assert!(matches!(
            SampleRing::with_duration(1, f64::INFINITY, 48_000.0),
            Err(RingError::Duration { .. })
        ));
        assert!(matches!(
            SampleRing::with_duration(1, 1e12, 48_000.0),
            Err(RingError::Size { .. })
        ));
        assert_eq!(
            SampleRing::with_duration(2, 0.5, 44_100.0)
                .unwrap()
                .capacity_frames(),
            22_050
        );
        let mut ring = SampleRing::new(2, 4).unwrap();
        assert!(matches!(
            ring.push(&[1.0, 2.0, 3.0]),
            Err(RingError::PartialFrame {
                samples: 3,
                channels: 2
            })
        ));
        assert_eq!(ring.len_frames(), 0);
    }
}
