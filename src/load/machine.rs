//! The machine a benchmark runs on and the process's memory, read from Linux's /proc.
//! Kept in `load` because it reads files; none of it is user data. Elsewhere than Linux
//! every figure is absent.

/// A value of a `key: value kB` line of a /proc status-like file, in bytes.
fn kib_field(text: &str, key: &str) -> Option<u64> {
    let line = text.lines().find(|l| l.starts_with(key))?;
    let kib: u64 = line[key.len()..].trim().trim_end_matches("kB").trim().parse().ok()?;
    Some(kib * 1024)
}

/// Peak resident memory of this process since it started or since the last reset.
pub fn peak_memory() -> Option<u64> {
    kib_field(&std::fs::read_to_string("/proc/self/status").ok()?, "VmHWM:")
}

/// Resets the peak to the current resident memory (Linux `clear_refs` value 5); false
/// when the kernel does not allow it.
pub fn reset_peak_memory() -> bool {
    std::fs::write("/proc/self/clear_refs", b"5").is_ok()
}

/// What the machine is: CPU model and count, memory, kernel.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct Machine {
    pub cpu: Option<String>,
    pub cpus: usize,
    pub memory_bytes: Option<u64>,
    pub kernel: Option<String>,
}

pub fn describe() -> Machine {
    let cpuinfo = std::fs::read_to_string("/proc/cpuinfo").unwrap_or_default();
    let cpu = cpuinfo
        .lines()
        .find(|l| l.starts_with("model name"))
        .and_then(|l| l.split_once(':'))
        .map(|(_, v)| v.trim().to_string());
    let cpus = std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1);
    let memory_bytes = std::fs::read_to_string("/proc/meminfo").ok().and_then(|t| kib_field(&t, "MemTotal:"));
    let kernel = std::fs::read_to_string("/proc/sys/kernel/osrelease").ok().map(|s| s.trim().to_string());
    Machine { cpu, cpus, memory_bytes, kernel }
}

/// Total size of the files under `dir`, bytes.
pub fn folder_bytes(dir: &std::path::Path) -> u64 {
    let mut total = 0;
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        let Ok(rd) = std::fs::read_dir(&d) else { continue };
        for e in rd.flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else if let Ok(m) = e.metadata() {
                total += m.len();
            }
        }
    }
    total
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn status_fields_are_read_in_bytes() {
        let t = "Name:\ttessera\nVmHWM:\t  123456 kB\nVmRSS:\t 1000 kB\n";
        assert_eq!(kib_field(t, "VmHWM:"), Some(123456 * 1024));
        assert_eq!(kib_field(t, "VmSwap:"), None);
    }
}
