//! The sound-card callbacks' steady state allocates nothing: a counting global allocator
//! watches every allocation made on this thread while the callback bodies run (priming,
//! playing, an underrun, the end, i16 conversion, capture with an overrun). No sound card is
//! needed: the bodies are the same structs the device streams call.

use amrx::sound::{capture_ring, playout_ring, LiveStats};
use amrx::Complex32;
use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;
use std::sync::Arc;

struct Counting;

thread_local! {
    /// Per thread, so that tests running in parallel do not see each other's allocations.
    static ARMED: Cell<bool> = const { Cell::new(false) };
    static ALLOCATIONS: Cell<usize> = const { Cell::new(0) };
}

fn count() {
    ALLOCATIONS.with(|n| n.set(n.get() + 1));
}

// SAFETY: forwards to the system allocator; only counts.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        if ARMED.with(Cell::get) {
            count();
        }
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        if ARMED.with(Cell::get) {
            count();
        }
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        if ARMED.with(Cell::get) {
            count();
        }
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

/// Counts the allocations (and frees) `f` makes on this thread.
fn allocations_in(f: impl FnOnce()) -> usize {
    let before = ALLOCATIONS.with(Cell::get);
    ARMED.with(|a| a.set(true));
    f();
    ARMED.with(|a| a.set(false));
    ALLOCATIONS.with(Cell::get) - before
}

#[test]
fn the_counter_sees_an_allocation() {
    // Without this, a broken counter would make the real checks pass vacuously.
    let n = allocations_in(|| {
        let v: Vec<u64> = std::hint::black_box(vec![1, 2, 3]);
        std::hint::black_box(v);
    });
    assert!(n >= 1, "the counting allocator counts nothing");
}

#[test]
fn output_callback_allocates_nothing() {
    let stats = Arc::new(LiveStats::default());
    let (mut feed, mut playout) = playout_ring(2, 48_000.0, 480, Arc::clone(&stats));
    let audio: Vec<f32> = (0..960).map(|i| (i as f32 * 0.01).sin()).collect();
    let mut device = vec![0.0f32; 512];
    let mut device16 = vec![0i16; 512];
    let n = allocations_in(|| {
        // Callbacks on time for 256-frame buffers at 48 kHz, for 15 s: long enough for the
        // rate meter to publish (it starts after 3 s and needs 10 s of fitted windows).
        let buffer_s = 256.0 / 48_000.0;
        let mut t = 0.0;
        for round in 0..1400 {
            // Keep the ring fed for most rounds, let it run dry now and then (underruns).
            if round % 50 < 45 {
                feed.try_push(&audio);
            }
            playout.render(&mut device, t, |x| x);
            playout.render(&mut device16, t + buffer_s, |x| (x * 32767.0) as i16);
            t += 2.0 * buffer_s;
        }
    });
    assert_eq!(n, 0, "the output callback allocated {n} times");
    assert!(
        stats.figures().underruns > 0,
        "the underrun path was exercised"
    );
    assert!(
        stats.figures().clock_ppm.is_some(),
        "the rate meter published"
    );
}

#[test]
fn capture_callback_allocates_nothing() {
    let stats = Arc::new(LiveStats::default());
    let (mut tap, mut reader) = capture_ring(2, 48_000.0, 2048, Arc::clone(&stats));
    let device: Vec<f32> = (0..1024).map(|i| (i as f32 * 0.02).cos()).collect();
    let device16: Vec<i16> = (0..1024).map(|i| i as i16).collect();
    let mut iq = vec![Complex32::default(); 4096];
    let mut in_callback = 0;
    let mut in_reader = 0;
    let mut t = 0.0;
    for round in 0..400 {
        in_callback += allocations_in(|| {
            tap.take(&device, t, |x| x);
            tap.take(&device16, t + 0.005, |x| x as f32 / 32768.0);
        });
        // The reader falls behind now and then (overruns).
        if round % 10 >= 2 {
            in_reader += allocations_in(|| {
                let _ = reader.read(&mut iq);
            });
        }
        t += 0.01;
    }
    assert_eq!(
        in_callback, 0,
        "the capture callback allocated {in_callback} times"
    );
    assert_eq!(in_reader, 0, "the reader allocated {in_reader} times");
    assert!(
        stats.figures().overruns > 0,
        "the overrun path was exercised"
    );
}
