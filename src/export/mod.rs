//! Things leadline writes for other programs and people: plots as PNG.

pub mod plot_png;
