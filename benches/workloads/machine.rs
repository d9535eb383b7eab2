//! What the machine says about itself through /proc: processor model, load average
//! and this process's peak resident memory.

/// The first three fields of /proc/loadavg, or "unknown".
pub fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_else(|| "unknown".to_string())
}

pub fn cpu_model() -> String {
    proc_field("/proc/cpuinfo", "model name").unwrap_or_else(|| "unknown".to_string())
}

/// Peak resident set of this process in kB (0 where /proc is not available).
pub fn vm_hwm_kb() -> u64 {
    proc_field("/proc/self/status", "VmHWM:")
        .and_then(|v| v.split_whitespace().next().and_then(|kb| kb.parse().ok()))
        .unwrap_or(0)
}

/// The text after the first `:` of the first line of `file` that starts with `key`,
/// trimmed.
fn proc_field(file: &str, key: &str) -> Option<String> {
    std::fs::read_to_string(file).ok().and_then(|s| {
        s.lines()
            .find(|l| l.starts_with(key))
            .and_then(|l| l.split(':').nth(1))
            .map(|v| v.trim().to_string())
    })
}

/// CPU seconds (user and system) of this process's children that have ended, from
/// /proc/self/stat (0 where /proc is not available). Counted in clock ticks of 1/100 s,
/// the Linux value of `CLK_TCK` on common platforms. On a machine shared with other
/// work a child's CPU time moves far less than its wall time.
pub fn children_cpu_s() -> f64 {
    std::fs::read_to_string("/proc/self/stat")
        .ok()
        .and_then(|s| {
            // Fields after the command name, which is in parentheses and may hold spaces:
            // the 14th and 15th of them are cutime and cstime.
            let rest = &s[s.rfind(')')? + 1..];
            let f: Vec<&str> = rest.split_whitespace().collect();
            let ticks = f.get(13)?.parse::<f64>().ok()? + f.get(14)?.parse::<f64>().ok()?;
            Some(ticks / 100.0)
        })
        .unwrap_or(0.0)
}
