//! Things leadline writes for other programs and people: plots as PNG, filters as C headers.

pub mod c_header;
pub mod plot_png;
