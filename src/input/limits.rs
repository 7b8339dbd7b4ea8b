//! Resource limits, checked before anything is allocated: a request whose estimated memory passes a stated share
//! of the machine's memory is refused with one line giving the estimate, instead of ending in an allocation abort.
//!
//! The per-cell and per-load figures were measured on this project's machine on 2026-12-02 as peak resident memory
//! of whole commands at two sizes (the slope between them): `dryfront airflow` at 6 144 and 196 608 cells (6.5 and
//! 48.6 MB: 226 B per cell), `dryfront dry` at 6 144 and 49 152 cells (7.3 and 19.5 MB: 284 B per cell). Each is
//! rounded up. A load of a season holds its arrival, schedule row and figures (a few hundred bytes; our estimate).

use crate::error::InputError;

/// Memory of the airflow solver per bed cell, bytes (measured 226, rounded up).
pub const AIRFLOW_BYTES_PER_CELL: f64 = 250.0;
/// Memory of a drying run per bed cell, airflow included, bytes (measured 284, rounded up).
pub const RUN_BYTES_PER_CELL: f64 = 320.0;
/// Memory per load of a season (arrival, schedule row, figures), bytes (our estimate).
pub const SEASON_BYTES_PER_LOAD: f64 = 1024.0;
/// Share of the machine's memory a request may use.
pub const MEMORY_SHARE: f64 = 0.5;
/// Memory assumed when `/proc/meminfo` cannot be read, bytes.
pub const FALLBACK_MEMORY_BYTES: f64 = 8.0 * 1024.0 * 1024.0 * 1024.0;

/// The machine's memory, bytes, and where the figure came from.
pub fn machine_memory() -> (f64, &'static str) {
    let total_kb = std::fs::read_to_string("/proc/meminfo").ok().and_then(|t| {
        t.lines()
            .find_map(|l| l.strip_prefix("MemTotal:"))
            .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<f64>().ok())
    });
    match total_kb {
        Some(kb) => (kb * 1024.0, "MemTotal in /proc/meminfo"),
        None => (FALLBACK_MEMORY_BYTES, "assumed: /proc/meminfo unreadable"),
    }
}

fn gib(bytes: f64) -> String {
    format!("{:.1} GiB", bytes / (1024.0 * 1024.0 * 1024.0))
}

/// Refuse `what` if its estimated memory `bytes` (worked out as `how`) passes [`MEMORY_SHARE`] of the machine's.
pub fn check_memory(what: &str, bytes: f64, how: &str) -> Result<(), InputError> {
    let (total, source) = machine_memory();
    let limit = MEMORY_SHARE * total;
    if bytes.is_finite() && bytes <= limit {
        return Ok(());
    }
    Err(InputError::argument(
        what,
        format!("needs about {} ({how})", gib(bytes)),
        &format!(
            "is refused: the limit is {} ({:.0} % of {} of memory, {source})",
            gib(limit),
            MEMORY_SHARE * 100.0,
            gib(total)
        ),
    ))
}

/// [`check_memory`] for a bed of `cells` cells at `bytes_per_cell`, `copies` of them at once.
pub fn check_cells(
    what: &str,
    cells: f64,
    bytes_per_cell: f64,
    copies: f64,
) -> Result<(), InputError> {
    let how = if copies > 1.0 {
        format!("{cells:.0} cells × {bytes_per_cell:.0} B × {copies:.0} runs")
    } else {
        format!("{cells:.0} cells × {bytes_per_cell:.0} B")
    };
    check_memory(what, cells * bytes_per_cell * copies, &how)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn small_requests_pass_and_huge_ones_are_refused_with_the_estimate() {
        assert!(check_cells("--nx/--ny/--nz", 49_152.0, AIRFLOW_BYTES_PER_CELL, 1.0).is_ok());
        let err = check_cells(
            "--nx/--ny/--nz",
            4096.0 * 4096.0 * 64.0,
            AIRFLOW_BYTES_PER_CELL,
            1.0,
        )
        .unwrap_err()
        .to_string();
        assert!(
            err.contains("needs about 250.0 GiB") && err.contains("limit"),
            "{err}"
        );
        assert!(!err.contains('\n'));
    }
}
