//! Process measurements shared by the bench binaries (each uses a subset, hence the allow).
#![allow(dead_code)]

/// Peak resident set so far (VmHWM from /proc/self/status), MB.
pub fn vm_hwm_mb() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// User + system CPU seconds of this process so far (all threads), from the kernel's
/// process CPU clock: less sensitive than wall time to other jobs sharing the two cores, and
/// exact to the microsecond (the tick counts in /proc advance in 4–10 ms steps).
pub fn cpu_s() -> f64 {
    let mut ts = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: a valid clock id and a pointer to a timespec we own.
    let rc = unsafe { libc::clock_gettime(libc::CLOCK_PROCESS_CPUTIME_ID, &mut ts) };
    if rc != 0 {
        return 0.0;
    }
    ts.tv_sec as f64 + ts.tv_nsec as f64 * 1e-9
}
