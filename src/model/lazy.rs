//! A value per package, computed on first use and shared between threads.

use super::PackageId;
use std::sync::OnceLock;

/// Packages per chunk: small enough that a plan touching a few hundred packages allocates
/// little, large enough that the chunk table of a registry stays a few thousand pointers.
const CHUNK: usize = 256;

/// One lazily computed `T` per package of a registry.
///
/// Storage grows by chunks as packages are first asked about. A slot per package up front
/// costs a registry-sized allocation to set up and to drop (50 ms for the twelve image views
/// of a 200,000-package plan), which a re-plan that solves a few hundred cells paid in full.
///
/// ```
/// use basefit::model::{PackageId, PerPackage};
/// let squares: PerPackage<u64> = PerPackage::new(1_000_000);
/// assert_eq!(*squares.get_or_init(PackageId(999_999), || 42), 42);
/// // Computed once: a second initializer is not run.
/// assert_eq!(*squares.get_or_init(PackageId(999_999), || 0), 42);
/// ```
pub struct PerPackage<T> {
    chunks: Box<[OnceLock<Chunk<T>>]>,
    packages: usize,
}

/// The slots of `CHUNK` consecutive packages.
type Chunk<T> = Box<[OnceLock<T>]>;

impl<T> PerPackage<T> {
    /// A table for package ids below `packages`.
    pub fn new(packages: usize) -> Self {
        PerPackage {
            chunks: (0..packages.div_ceil(CHUNK))
                .map(|_| OnceLock::new())
                .collect(),
            packages,
        }
    }

    /// The value for `id`, computing it with `init` if no thread has yet.
    ///
    /// Panics when `id` is not below the count the table was made for, as indexing a slice
    /// past its end would.
    pub fn get_or_init(&self, id: PackageId, init: impl FnOnce() -> T) -> &T {
        let at = id.0 as usize;
        let first = at - at % CHUNK;
        // The last chunk is cut to the table's length, so an id past it fails as it would on
        // a slice rather than finding a spare slot.
        let chunk = self.chunks[at / CHUNK].get_or_init(|| {
            (first..self.packages.min(first + CHUNK))
                .map(|_| OnceLock::new())
                .collect()
        });
        chunk[at - first].get_or_init(init)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::{AtomicUsize, Ordering};

    #[test]
    fn each_value_is_computed_once_even_when_threads_race() {
        let table: PerPackage<u32> = PerPackage::new(3 * CHUNK + 1);
        let runs = AtomicUsize::new(0);
        std::thread::scope(|s| {
            for _ in 0..4 {
                s.spawn(|| {
                    for id in (0..3 * CHUNK as u32 + 1).rev() {
                        let v = table.get_or_init(PackageId(id), || {
                            runs.fetch_add(1, Ordering::Relaxed);
                            id * 2
                        });
                        assert_eq!(*v, id * 2);
                    }
                });
            }
        });
        assert_eq!(runs.load(Ordering::Relaxed), 3 * CHUNK + 1);
    }

    #[test]
    #[should_panic]
    fn an_id_past_the_table_is_refused_even_inside_the_last_chunk() {
        let table: PerPackage<u8> = PerPackage::new(CHUNK + 1);
        table.get_or_init(PackageId(CHUNK as u32 + 1), || 1);
    }

    #[test]
    fn chunks_are_allocated_only_where_asked() {
        let table: PerPackage<u8> = PerPackage::new(10 * CHUNK);
        table.get_or_init(PackageId(5 * CHUNK as u32 + 3), || 1);
        let allocated = table.chunks.iter().filter(|c| c.get().is_some()).count();
        assert_eq!(allocated, 1);
    }
}
