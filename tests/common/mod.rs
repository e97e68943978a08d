//! Helpers shared by several test files.

/// A case count (or seed) for a long-running test, from the environment variable `name` when
/// it is set, else `default`: CI uses the small defaults, long runs set the variable. A value
/// that is not a number stops the test rather than quietly running the default.
pub fn env_count(name: &str, default: u64) -> u64 {
    match std::env::var(name) {
        Err(_) => default,
        Ok(text) => text
            .trim()
            .parse()
            .unwrap_or_else(|_| panic!("{name}={text}: expected a whole number")),
    }
}
