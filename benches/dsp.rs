//! Criterion benchmarks of the filter cascade: 1, 4 and 8 sections, f64 (the live chain) and f32
//! (the same sections on the biquad crate's f32 form, as firmware would run them).

use std::hint::black_box;

use biquad::{Biquad, Coefficients, DirectForm2Transposed};
use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use leadline::dsp::chain::{Chain, ChainSettings, HighPass, LowPass, Notch};
use leadline::dsp::design::Section;

const FS: f64 = 1000.0;
const N: usize = 65_536;

/// Chains with 1, 4 and 8 sections.
fn chain_with(sections: usize) -> ChainSettings {
    let off = |c: ChainSettings| ChainSettings {
        highpass: HighPass {
            enabled: false,
            ..c.highpass
        },
        notch: Notch {
            enabled: false,
            ..c.notch
        },
        lowpass: LowPass {
            enabled: false,
            ..c.lowpass
        },
        ..c
    };
    let base = off(ChainSettings::default());
    match sections {
        1 => ChainSettings {
            notch: Notch {
                enabled: true,
                mains_hz: 60.0,
                ..base.notch
            },
            ..base
        },
        4 => leadline::cli::bench::bench_chain(),
        _ => ChainSettings {
            highpass: HighPass {
                enabled: true,
                corner_hz: 0.5,
                order: 6,
            },
            notch: Notch {
                enabled: true,
                mains_hz: 60.0,
                q: 30.0,
                harmonics: 1,
                auto: false,
            },
            lowpass: LowPass {
                enabled: true,
                corner_hz: 40.0,
                order: 6,
            },
            gain: 1.0,
            cancel: Default::default(),
        },
    }
}

fn f32_cascade(sections: &[Section]) -> Vec<DirectForm2Transposed<f32>> {
    sections
        .iter()
        .map(|s| {
            DirectForm2Transposed::<f32>::new(Coefficients {
                a1: s.a1 as f32,
                a2: s.a2 as f32,
                b0: s.b0 as f32,
                b1: s.b1 as f32,
                b2: s.b2 as f32,
            })
        })
        .collect()
}

fn bench(c: &mut Criterion) {
    let x = leadline::cli::bench::bench_signal(N, FS);
    let x32: Vec<f32> = x.iter().map(|&v| v as f32).collect();
    let mut g = c.benchmark_group("chain");
    g.throughput(Throughput::Elements(N as u64));
    for n in [1usize, 4, 8] {
        let settings = chain_with(n);
        let sections = settings.design(FS).map(|d| d.to_vec()).unwrap_or_default();
        assert_eq!(sections.len(), n, "bench chain of {n} sections");
        g.bench_with_input(BenchmarkId::new("f64", n), &n, |b, _| {
            let mut chain = Chain::new(settings, FS, 1).unwrap_or_else(|_| unreachable!());
            let mut buf = x.clone();
            b.iter(|| {
                buf.copy_from_slice(&x);
                chain.process_channel(0, &mut buf);
                black_box(&buf);
            });
        });
        g.bench_with_input(BenchmarkId::new("f32", n), &n, |b, _| {
            let mut cascade = f32_cascade(&sections);
            let mut buf = x32.clone();
            b.iter(|| {
                buf.copy_from_slice(&x32);
                for v in buf.iter_mut() {
                    *v = cascade.iter_mut().fold(*v, |acc, s| s.run(acc));
                }
                black_box(&buf);
            });
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
