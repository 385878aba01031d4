//! `LiveSpectrum::push` and draining the segment powers allocate nothing (the page pushes a
//! 128-frame quantum hundreds of times a second). A counting global allocator counts the
//! allocations made by this test's own thread (a thread-local counter, so the harness's other
//! threads do not disturb it).

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

use noisesonde::live::{LiveAveraging, LiveSpectrum};
use noisesonde::spectral::{WelchPlan, WelchSettings};

struct Counting;

thread_local! {
    static ALLOCATIONS: Cell<u64> = const { Cell::new(0) };
}

fn count() {
    // try_with: the counter may already be gone while a thread shuts down.
    let _ = ALLOCATIONS.try_with(|c| c.set(c.get() + 1));
}

// SAFETY: every call is forwarded unchanged to the system allocator; only a counter is added.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        count();
        unsafe { System.alloc(layout) }
    }
    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        count();
        unsafe { System.alloc_zeroed(layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        count();
        unsafe { System.realloc(ptr, layout, new_size) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocations() -> u64 {
    ALLOCATIONS.with(Cell::get)
}

#[test]
fn push_and_drain_allocate_nothing() {
    let quantum: Vec<f64> = (0..128)
        .map(|n| ((n * 7919) % 113) as f64 / 113.0 - 0.5)
        .collect();
    for averaging in [
        LiveAveraging::Linear { segments: 16 },
        LiveAveraging::Exponential {
            time_constant_s: 0.125,
        },
    ] {
        let plan = WelchPlan::new(&WelchSettings::default()).unwrap();
        let bins = plan.bins();
        let mut live = LiveSpectrum::new(plan, 48_000.0, averaging).unwrap();
        live.set_band_weights(vec![vec![1.0; bins], vec![0.25; bins]], 32)
            .unwrap();
        // Sanity check of the counter itself: a Vec allocates.
        let before = allocations();
        let probe = vec![0u8; 16];
        assert!(
            allocations() > before,
            "the counting allocator does not count"
        );
        drop(probe);

        let before = allocations();
        let mut drained = 0usize;
        let mut energy = 0.0;
        // 3 s of 48 kHz audio in render quanta: ~70 segments of 4096 at 50 % overlap.
        for i in 0..1125 {
            live.push(&quantum).unwrap();
            if i % 40 == 0 {
                for p in live.drain_segment_powers() {
                    drained += 1;
                    energy += p.power[0];
                }
            }
        }
        let after = allocations();
        assert_eq!(after, before, "{averaging}: push/drain allocated");
        assert!(drained > 30 && energy > 0.0, "{drained} {energy}");
        assert_eq!(live.segments_total(), (1125 * 128 - 2048) / 2048);
    }
}
