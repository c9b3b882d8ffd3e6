//! Figures that hold on records the tuning never saw: the detector's free choices
//! ([`Tuning`]) are chosen on three records and scored on the other two, for all ten ways to
//! split five records, so every record is scored four times by a choice made without it.
//! Scoring is EC57's (±150 ms match, Se and +P pooled over records; docs/REFERENCES.md §2).

use serde::Serialize;

use super::beats::{Detector, Score, Tuning, score};

/// One annotated record.
#[derive(Debug, Clone)]
pub struct Annotated {
    pub name: String,
    pub fs_hz: f64,
    /// The signal (any unit).
    pub x: Vec<f64>,
    /// Reference beat positions, samples, sorted.
    pub reference: Vec<u64>,
}

/// Runs the detector as the monitor does (blocks of 64 samples) and scores it from sample
/// `from` to the end of the record.
pub fn score_record(rec: &Annotated, tuning: Tuning, from: u64) -> Score {
    let Ok(mut det) = Detector::with_tuning(rec.fs_hz, tuning) else {
        return Score::default();
    };
    let mut beats = Vec::new();
    for block in rec.x.chunks(64) {
        det.process(block, &mut beats);
    }
    let found: Vec<u64> = beats.iter().map(|b| b.sample).collect();
    let tol = (0.150 * rec.fs_hz).round() as u64;
    // A beat in the last second is not decided yet when the record ends: neither side counts.
    let to = (rec.x.len() as u64).saturating_sub(rec.fs_hz as u64);
    score(&rec.reference, &found, tol, from, to)
}

/// One split: the records tuned on, the choice made, and the records scored with it.
#[derive(Debug, Clone, Serialize)]
pub struct Split {
    pub tuned_on: Vec<String>,
    pub chosen: Tuning,
    pub scored_on: Vec<String>,
    /// Se and +P of the held-out records, %.
    pub held_out_se_pct: f64,
    pub held_out_ppv_pct: f64,
}

/// A record's figures when held out (pooled over the splits that held it out).
#[derive(Debug, Clone, Serialize)]
pub struct HeldOutRecord {
    pub name: String,
    pub se_pct: f64,
    pub ppv_pct: f64,
}

/// The whole cross-check.
#[derive(Debug, Clone, Serialize)]
pub struct SplitReport {
    pub splits: Vec<Split>,
    pub records: Vec<HeldOutRecord>,
    /// Pooled over every held-out scoring, %.
    pub gross_se_pct: f64,
    pub gross_ppv_pct: f64,
    /// How often each choice of the grid won a split.
    pub wins: Vec<(Tuning, usize)>,
}

fn failures(s: &Score) -> usize {
    s.fn_ + s.fp
}

/// Chooses on every 3-of-`records.len()` split (the choice with the fewest missed plus false
/// beats on the three; ties go to the earlier choice of `grid`) and scores on the rest.
pub fn cross_check(records: &[Annotated], grid: &[Tuning]) -> SplitReport {
    // Every (choice, record) score once: a split only adds them up.
    let table: Vec<Vec<Score>> = grid
        .iter()
        .map(|&t| records.iter().map(|r| score_record(r, t, 0)).collect())
        .collect();
    let n = records.len();
    let mut splits = Vec::new();
    let mut per_record = vec![Score::default(); n];
    let mut wins = vec![0usize; grid.len()];
    for mask in 0u32..(1 << n) {
        if mask.count_ones() as usize != 3.min(n.saturating_sub(1)) {
            continue;
        }
        let tuned: Vec<usize> = (0..n).filter(|k| mask & (1 << k) != 0).collect();
        let scored: Vec<usize> = (0..n).filter(|k| mask & (1 << k) == 0).collect();
        let best = (0..grid.len())
            .min_by_key(|&g| tuned.iter().map(|&k| failures(&table[g][k])).sum::<usize>())
            .unwrap_or(0);
        wins[best] += 1;
        let mut held = Score::default();
        for &k in &scored {
            held = held.add(&table[best][k]);
            per_record[k] = per_record[k].add(&table[best][k]);
        }
        splits.push(Split {
            tuned_on: tuned.iter().map(|&k| records[k].name.clone()).collect(),
            chosen: grid[best],
            scored_on: scored.iter().map(|&k| records[k].name.clone()).collect(),
            held_out_se_pct: 100.0 * held.se(),
            held_out_ppv_pct: 100.0 * held.ppv(),
        });
    }
    let gross = per_record.iter().fold(Score::default(), |a, s| a.add(s));
    SplitReport {
        splits,
        records: records
            .iter()
            .zip(&per_record)
            .map(|(r, s)| HeldOutRecord {
                name: r.name.clone(),
                se_pct: 100.0 * s.se(),
                ppv_pct: 100.0 * s.ppv(),
            })
            .collect(),
        gross_se_pct: 100.0 * gross.se(),
        gross_ppv_pct: 100.0 * gross.ppv(),
        wins: grid.iter().copied().zip(wins).collect(),
    }
}
