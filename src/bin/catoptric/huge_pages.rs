//! The command's memory allocator: big buffers on huge pages.
//!
//! A million-ray trace writes some 60 MB of hit columns, a lattice and
//! an analysis scratch that a fresh process has never touched. Backed by
//! 4 KiB pages that is some fifteen thousand page faults, as long as the
//! tracing itself. Linux backs a region with 2 MiB pages (transparent huge
//! pages, on "madvise" by default) only where whole, aligned 2 MiB spans
//! are advised, and the C allocator hands out big blocks at an arbitrary
//! page, so up to 2 MiB at each end of every column stays on small pages.
//! Here every block of [`BIG`] or more is its own mapping, aligned to and
//! rounded up to [`HUGE`], advised for huge pages; the rest goes to the
//! system allocator. A freed mapping is kept (a few, see [`KEPT`]) for the
//! next block of the same size, as the C allocator keeps its heap: a loop
//! that allocates and frees the same scratch (the analyses of each
//! re-trace) then faults it in once. Elsewhere than Linux this is the
//! system allocator.

use std::alloc::{GlobalAlloc, Layout, System};
#[cfg(target_os = "linux")]
use std::ptr;

/// The allocator `main` installs.
pub struct HugePages;

#[cfg(target_os = "linux")]
mod linux {
    use super::*;
    use std::sync::Mutex;

    /// The huge page size of x86-64 and arm64 Linux (2 MiB).
    pub(super) const HUGE: usize = 2 << 20;
    /// Blocks from this size up get their own huge-page mapping. Smaller
    /// ones would waste most of a huge page.
    pub(super) const BIG: usize = 1 << 20;
    /// Alignment an `mremap`ped block keeps: a page.
    const PAGE: usize = 4096;
    /// Freed mappings kept for reuse: more than a trace result's columns
    /// and its analyses' scratch together (about a dozen big blocks), so a
    /// loop of traces (tolerances, optimisation, the bench) faults each
    /// in once.
    pub(super) const KEPT: usize = 16;

    /// Freed mappings (address, size), reused by the next block of the
    /// same size. Locking never allocates.
    static FREED: Mutex<[(usize, usize); KEPT]> = Mutex::new([(0, 0); KEPT]);

    /// A kept mapping of `size` bytes, taken out of the list.
    pub(super) fn reuse(size: usize) -> Option<*mut u8> {
        let mut kept = FREED.lock().ok()?;
        let slot = kept.iter_mut().find(|(p, s)| *p != 0 && *s == size)?;
        let p = std::mem::take(slot).0;
        Some(p as *mut u8)
    }

    /// Keeps the mapping `p` of `size` bytes for reuse, or unmaps it when
    /// the list is full. Only mappings on a [`HUGE`] boundary are kept (one
    /// moved by `mremap` is only page-aligned, less than a reused block
    /// may need).
    pub(super) unsafe fn release(p: *mut u8, size: usize) {
        if (p as usize).is_multiple_of(HUGE)
            && let Ok(mut kept) = FREED.lock()
            && let Some(slot) = kept.iter_mut().find(|(q, _)| *q == 0)
        {
            *slot = (p as usize, size);
            return;
        }
        // SAFETY: `p..p + size` is a whole mapping made by `map` or `remap`.
        unsafe {
            libc::munmap(p as *mut libc::c_void, size);
        }
    }

    /// The mapped size of a block of layout `l`, when it is big.
    pub(super) fn mapped(l: Layout) -> Option<usize> {
        (l.size() >= BIG && l.align() <= HUGE).then(|| l.size().next_multiple_of(HUGE))
    }

    /// A fresh, zeroed, huge-page-advised mapping of `size` bytes (a
    /// multiple of [`HUGE`]) starting on a [`HUGE`] boundary; null when
    /// the system has no memory.
    pub(super) unsafe fn map(size: usize) -> *mut u8 {
        let Some(span) = size.checked_add(HUGE) else { return ptr::null_mut() };
        // SAFETY: an anonymous private mapping at an address the kernel
        // picks; the parts trimmed off are inside it and unused.
        unsafe {
            let p = libc::mmap(ptr::null_mut(), span, libc::PROT_READ | libc::PROT_WRITE, libc::MAP_PRIVATE | libc::MAP_ANONYMOUS, -1, 0);
            if p == libc::MAP_FAILED {
                return ptr::null_mut();
            }
            let a = p as usize;
            let start = a.next_multiple_of(HUGE);
            let end = start + size;
            if start > a {
                libc::munmap(p, start - a);
            }
            if a + span > end {
                libc::munmap(end as *mut libc::c_void, a + span - end);
            }
            // Advice only; without huge pages the block is still valid.
            libc::madvise(start as *mut libc::c_void, size, libc::MADV_HUGEPAGE);
            start as *mut u8
        }
    }

    /// Grows or shrinks a big block in place or by moving its pages (no
    /// copy); null when that is not possible.
    pub(super) unsafe fn remap(p: *mut u8, old: usize, new: usize, align: usize) -> *mut u8 {
        if align > PAGE {
            return ptr::null_mut();
        }
        // SAFETY: `p..p + old` is a mapping made by `map` (or a previous
        // `remap`) and owned by the caller.
        let q = unsafe { libc::mremap(p as *mut libc::c_void, old, new, libc::MREMAP_MAYMOVE) };
        if q == libc::MAP_FAILED { ptr::null_mut() } else { q as *mut u8 }
    }
}

// SAFETY: big blocks are whole private mappings, at least as large and as
// aligned as their layout, unmapped with the same rounded size they were
// mapped with (a function of the layout alone); everything else is the
// system allocator's.
#[cfg(target_os = "linux")]
unsafe impl GlobalAlloc for HugePages {
    unsafe fn alloc(&self, l: Layout) -> *mut u8 {
        match linux::mapped(l) {
            Some(size) => linux::reuse(size).unwrap_or_else(|| unsafe { linux::map(size) }),
            None => unsafe { System.alloc(l) },
        }
    }

    unsafe fn alloc_zeroed(&self, l: Layout) -> *mut u8 {
        match linux::mapped(l) {
            Some(size) => match linux::reuse(size) {
                Some(p) => {
                    // Dropped pages read as zeros again, each zeroed where
                    // it is first touched (by the threads that fill it, not
                    // here on one thread).
                    // SAFETY: the kept mapping `p..p + size` is ours.
                    let dropped = unsafe { libc::madvise(p as *mut libc::c_void, size, libc::MADV_DONTNEED) };
                    if dropped != 0 {
                        // SAFETY: as above; the mapping holds `size` ≥ `l.size()` bytes.
                        unsafe { ptr::write_bytes(p, 0, l.size()) };
                    }
                    p
                }
                // A fresh anonymous mapping reads as zeros.
                None => unsafe { linux::map(size) },
            },
            None => unsafe { System.alloc_zeroed(l) },
        }
    }

    unsafe fn dealloc(&self, p: *mut u8, l: Layout) {
        match linux::mapped(l) {
            Some(size) => unsafe { linux::release(p, size) },
            None => unsafe { System.dealloc(p, l) },
        }
    }

    unsafe fn realloc(&self, p: *mut u8, l: Layout, new_size: usize) -> *mut u8 {
        // SAFETY: the caller guarantees `new_size`, rounded up to `l`'s
        // alignment, does not overflow.
        let nl = unsafe { Layout::from_size_align_unchecked(new_size, l.align()) };
        match (linux::mapped(l), linux::mapped(nl)) {
            (None, None) => unsafe { System.realloc(p, l, new_size) },
            (Some(old), Some(new)) if old == new => p,
            (Some(old), Some(new)) => {
                let q = unsafe { linux::remap(p, old, new, l.align()) };
                if q.is_null() { unsafe { copy_realloc(self, p, l, nl) } } else { q }
            }
            _ => unsafe { copy_realloc(self, p, l, nl) },
        }
    }
}

/// Tells the C allocator (glibc) to keep the memory freed at the top of
/// its heaps rather than give it back to the system above 128 KiB: the
/// analyses of each re-trace allocate and free some megabytes of per-chunk
/// histograms and maps (each below [`linux::BIG`]), and given back they
/// are faulted in and zeroed again page by page, some 570 page faults per
/// report of a million hits. Blocks from [`linux::BIG`] up are this
/// module's own; those between the C allocator's default mapping threshold
/// and [`linux::BIG`] come from its heap too. Call once, first thing.
pub fn keep_c_heap() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: `mallopt` only sets the allocator's parameters; called
    // before any other thread exists.
    unsafe {
        libc::mallopt(libc::M_TRIM_THRESHOLD, KEEP_FREED as libc::c_int);
        libc::mallopt(libc::M_MMAP_THRESHOLD, linux::BIG as libc::c_int);
    }
}

/// Freed C-heap memory kept at the top of a heap before some is given back.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
const KEEP_FREED: usize = 256 << 20;

/// A new block of `nl`, the old one's bytes copied over, the old one freed.
#[cfg(target_os = "linux")]
unsafe fn copy_realloc(a: &HugePages, p: *mut u8, l: Layout, nl: Layout) -> *mut u8 {
    // SAFETY: as `GlobalAlloc::realloc`: `p` holds `l.size()` bytes.
    unsafe {
        let q = a.alloc(nl);
        if !q.is_null() {
            std::ptr::copy_nonoverlapping(p, q, l.size().min(nl.size()));
            a.dealloc(p, l);
        }
        q
    }
}

// SAFETY: the system allocator, unchanged.
#[cfg(not(target_os = "linux"))]
unsafe impl GlobalAlloc for HugePages {
    unsafe fn alloc(&self, l: Layout) -> *mut u8 {
        unsafe { System.alloc(l) }
    }
    unsafe fn alloc_zeroed(&self, l: Layout) -> *mut u8 {
        unsafe { System.alloc_zeroed(l) }
    }
    unsafe fn dealloc(&self, p: *mut u8, l: Layout) {
        unsafe { System.dealloc(p, l) }
    }
    unsafe fn realloc(&self, p: *mut u8, l: Layout, new_size: usize) -> *mut u8 {
        unsafe { System.realloc(p, l, new_size) }
    }
}

#[cfg(all(test, target_os = "linux"))]
mod tests {
    use super::linux::{mapped, BIG, HUGE};
    use super::*;

    #[test]
    fn big_blocks_are_whole_aligned_huge_spans() {
        // Common practice (Linux transparent huge pages): a 2 MiB page backs
        // only an aligned, fully advised 2 MiB span.
        let l = Layout::array::<f64>(1_000_009).unwrap();
        assert_eq!(mapped(l), Some(4 * HUGE));
        assert_eq!(mapped(Layout::array::<u8>(BIG - 1).unwrap()), None);
        let a = HugePages;
        unsafe {
            let p = a.alloc_zeroed(l);
            assert!(!p.is_null());
            assert_eq!(p as usize % HUGE, 0);
            let s = std::slice::from_raw_parts_mut(p as *mut f64, 1_000_009);
            assert!(s.iter().all(|&x| x == 0.0));
            s[999_999] = 2.5;
            // Grown past its mapping: moved without losing a byte.
            let bigger = 5 * HUGE;
            let q = a.realloc(p, l, bigger) as *mut f64;
            assert!(!q.is_null());
            assert_eq!(*q.add(999_999), 2.5);
            // Shrunk below the threshold: back with the system allocator.
            let l2 = Layout::from_size_align(bigger, l.align()).unwrap();
            let r = a.realloc(q as *mut u8, l2, 8 * 1_000_000) as *mut f64;
            assert_eq!(*r.add(999_999), 2.5);
            let l3 = Layout::from_size_align(8 * 1_000_000, l.align()).unwrap();
            let small = a.realloc(r as *mut u8, l3, 64) as *mut f64;
            assert!(!small.is_null());
            a.dealloc(small as *mut u8, Layout::from_size_align(64, l.align()).unwrap());
        }
    }

    #[test]
    fn a_freed_mapping_is_reused_and_zeroed_again() {
        // Common practice (as the C allocator's calloc on reused memory): a
        // zeroed block reads as zeros even when it is a kept mapping. Sizes
        // of 7 huge pages, which no other test here uses.
        let l = Layout::from_size_align(7 * HUGE - 100, 8).unwrap();
        let a = HugePages;
        unsafe {
            let p = a.alloc_zeroed(l);
            std::ptr::write_bytes(p, 0xAB, l.size());
            a.dealloc(p, l);
            let q = a.alloc_zeroed(l);
            // The same mapping again (no other test frees this size), so
            // the zeros below are the reuse path's, not a fresh mapping's.
            assert_eq!(q, p, "the kept mapping is reused");
            assert_eq!(q as usize % HUGE, 0);
            let s = std::slice::from_raw_parts(q, l.size());
            assert!(s.iter().all(|&b| b == 0));
            a.dealloc(q, l);
        }
    }

    #[test]
    fn a_kept_mapping_goes_only_to_a_block_of_its_size() {
        // Common practice (a size-class free list): a freed block is
        // handed out again only for a request of the size it was mapped
        // with. Sizes of 9 and 11 huge pages, which no other test uses.
        let (la, lb) = (Layout::from_size_align(9 * HUGE, 8).unwrap(), Layout::from_size_align(11 * HUGE, 8).unwrap());
        let a = HugePages;
        unsafe {
            let (pa, pb) = (a.alloc(la), a.alloc(lb));
            a.dealloc(pa, la);
            a.dealloc(pb, lb);
            let qb = a.alloc(lb);
            let qa = a.alloc(la);
            assert_eq!((qa, qb), (pa, pb));
            a.dealloc(qa, la);
            a.dealloc(qb, lb);
        }
    }

    #[test]
    fn vectors_grow_and_shrink_across_the_threshold() {
        // Common practice: a Vec pushed past and shrunk below the
        // threshold keeps its contents whichever allocator holds it.
        let mut v: Vec<u32> = Vec::new();
        for i in 0..1_200_000u32 {
            v.push(i);
        }
        assert!(v.iter().enumerate().all(|(i, &x)| x as usize == i));
        v.truncate(1000);
        v.shrink_to_fit();
        assert_eq!(v.iter().map(|&x| x as u64).sum::<u64>(), 999 * 1000 / 2);
    }
}
