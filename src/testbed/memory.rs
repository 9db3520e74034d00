//! The process's memory use, as the operating system counts it: the resident
//! set now and its high-water mark. Read from `/proc/self/status` on Linux;
//! elsewhere every reading is `None`.
//!
//! This module reads `/proc` and nothing else.

/// The largest resident set size of the process so far (`VmHWM`), in bytes.
pub fn peak_rss_bytes() -> Option<u64> {
    status_field("VmHWM:")
}

/// The resident set size of the process now (`VmRSS`), in bytes.
pub fn rss_bytes() -> Option<u64> {
    status_field("VmRSS:")
}

/// Resets the high-water mark to the current resident set size, so that a
/// later [`peak_rss_bytes`] measures one phase of the work. Returns whether
/// the reset worked (Linux 4.0 and later: writing 5 to `/proc/self/clear_refs`).
pub fn reset_peak() -> bool {
    #[cfg(target_os = "linux")]
    {
        std::fs::write("/proc/self/clear_refs", "5").is_ok()
    }
    #[cfg(not(target_os = "linux"))]
    {
        false
    }
}

/// A `kB` field of `/proc/self/status`, in bytes.
fn status_field(name: &str) -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    parse_kilobytes(&status, name)
}

/// Finds `name` at the start of a line of `status` and reads the number of
/// kilobytes after it.
fn parse_kilobytes(status: &str, name: &str) -> Option<u64> {
    let line = status.lines().find(|line| line.starts_with(name))?;
    let kilobytes: u64 = line[name.len()..].split_whitespace().next()?.parse().ok()?;
    Some(kilobytes * 1024)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn status_fields_are_read_in_kilobytes() {
        // Source: proc(5), "VmHWM: Peak resident set size", values in kB.
        let status = "Name:\tthemata\nVmHWM:\t  123456 kB\nVmRSS:\t    2048 kB\n";
        assert_eq!(parse_kilobytes(status, "VmHWM:"), Some(123_456 * 1024));
        assert_eq!(parse_kilobytes(status, "VmRSS:"), Some(2048 * 1024));
        assert_eq!(parse_kilobytes(status, "VmSwap:"), None);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn the_peak_is_at_least_the_current_size() {
        // Source: proc(5) — the high-water mark bounds the resident set.
        // The resident set is read first: other tests allocate on other
        // threads, so a size read after the peak could already be larger.
        // (No unit test resets the peak; only `themata bench` does.)
        let now = rss_bytes().unwrap();
        let peak = peak_rss_bytes().unwrap();
        assert!(peak >= now, "{peak} < {now}");
    }
}
