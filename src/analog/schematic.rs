//! A schematic of the realised chain in leadline's own plain style: one cell per stage, left to
//! right in processing order, every part with its designator and value, the input and output
//! nodes named, and the supply assumption written out. Drawn as lines, dots and text so the same
//! drawing goes to an SVG file and onto the Parts view.

use super::circuit::{Circuit, Kind, Part, spice_value};

/// A drawing primitive, in drawing units (1 unit ≈ 1 px at 100 %).
#[derive(Debug, Clone, PartialEq)]
pub enum Prim {
    Line(f64, f64, f64, f64),
    Dot(f64, f64),
    /// Text at (x, y), anchored at its middle when `centre`.
    Text(f64, f64, String, bool),
}

/// A whole drawing and its size.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Drawing {
    pub prims: Vec<Prim>,
    pub width: f64,
    pub height: f64,
}

const CELL_W: f64 = 260.0;
const CELL_H: f64 = 220.0;
const TOP: f64 = 110.0;

struct Pen<'a> {
    d: &'a mut Drawing,
    x0: f64,
}

impl Pen<'_> {
    fn line(&mut self, x1: f64, y1: f64, x2: f64, y2: f64) {
        self.d
            .prims
            .push(Prim::Line(self.x0 + x1, TOP + y1, self.x0 + x2, TOP + y2));
    }
    fn text(&mut self, x: f64, y: f64, t: impl Into<String>, centre: bool) {
        self.d
            .prims
            .push(Prim::Text(self.x0 + x, TOP + y, t.into(), centre));
    }
    fn dot(&mut self, x: f64, y: f64) {
        self.d.prims.push(Prim::Dot(self.x0 + x, TOP + y));
    }
    /// A resistor between two points (horizontal or vertical), labelled.
    fn resistor(&mut self, a: (f64, f64), b: (f64, f64), p: &Part) {
        self.two_terminal(a, b, p, resistor_body);
    }
    /// A capacitor between two points, labelled.
    fn capacitor(&mut self, a: (f64, f64), b: (f64, f64), p: &Part) {
        self.two_terminal(a, b, p, capacitor_body);
    }
    /// One symbol standing for several parts (series or parallel), with their designators and
    /// values joined.
    fn group(&mut self, a: (f64, f64), b: (f64, f64), parts: &[&Part], join: &str, cap: bool) {
        let names: Vec<String> = parts.iter().map(|p| p.designator.clone()).collect();
        let values: Vec<String> = parts.iter().map(|p| value_text(p)).collect();
        let body = if cap { capacitor_body } else { resistor_body };
        self.two_terminal_text(a, b, &names.join(join), &values.join(join), body);
    }

    fn two_terminal(&mut self, a: (f64, f64), b: (f64, f64), p: &Part, body: Body) {
        let v = value_text(p);
        self.two_terminal_text(a, b, &p.designator, &v, body);
    }

    fn two_terminal_text(
        &mut self,
        a: (f64, f64),
        b: (f64, f64),
        name: &str,
        value: &str,
        body: Body,
    ) {
        let horizontal = (a.1 - b.1).abs() < 1e-9;
        let c = ((a.0 + b.0) / 2.0, (a.1 + b.1) / 2.0);
        let (w, h) = body(self, c, horizontal);
        if horizontal {
            let (l, r) = if a.0 < b.0 { (a, b) } else { (b, a) };
            self.line(l.0, l.1, c.0 - w, c.1);
            self.line(c.0 + w, c.1, r.0, r.1);
            self.text(c.0, c.1 - h - 14.0, name, true);
            self.text(c.0, c.1 - h - 3.0, value, true);
        } else {
            let (t, u) = if a.1 < b.1 { (a, b) } else { (b, a) };
            self.line(t.0, t.1, c.0, c.1 - h);
            self.line(c.0, c.1 + h, u.0, u.1);
            self.text(c.0 + w + 4.0, c.1 - 2.0, name, false);
            self.text(c.0 + w + 4.0, c.1 + 10.0, value, false);
        }
    }
    fn ground(&mut self, x: f64, y: f64) {
        self.line(x - 8.0, y, x + 8.0, y);
        self.line(x - 5.0, y + 3.0, x + 5.0, y + 3.0);
        self.line(x - 2.0, y + 6.0, x + 2.0, y + 6.0);
    }
    /// A follower: + input at (x, y), output at (x + 40, y), − tied to the output.
    fn follower(&mut self, x: f64, y: f64, p: &Part) {
        self.line(x, y - 16.0, x, y + 16.0);
        self.line(x, y - 16.0, x + 32.0, y);
        self.line(x, y + 16.0, x + 32.0, y);
        self.text(x + 4.0, y - 5.0, "+", false);
        self.text(x + 4.0, y + 12.0, "−", false);
        self.line(x + 32.0, y, x + 40.0, y);
        // Feedback: output back to − below the triangle.
        self.line(x + 36.0, y, x + 36.0, y + 24.0);
        self.line(x + 36.0, y + 24.0, x - 6.0, y + 24.0);
        self.line(x - 6.0, y + 24.0, x - 6.0, y + 8.0);
        self.line(x - 6.0, y + 8.0, x, y + 8.0);
        self.text(x + 14.0, y - 20.0, p.designator.clone(), true);
    }
}

fn value_text(p: &Part) -> String {
    match p.kind {
        Kind::Resistor => format!("{}Ω", spice_value(p.value).replace("Meg", "M")),
        Kind::Capacitor => format!("{}F", spice_value(p.value).replace('u', "µ")),
        _ => String::new(),
    }
}

/// The schematic of `c`.
pub fn draw(c: &Circuit) -> Drawing {
    let mut d = Drawing {
        prims: Vec::new(),
        width: c.stages.iter().map(|s| cell_width(s.0)).sum::<f64>() + 60.0,
        height: CELL_H + TOP + 40.0,
    };
    let y = 60.0; // the signal line
    let mut x0 = 30.0;
    for (i, (topology, input, output)) in c.stages.iter().enumerate() {
        let parts: Vec<&Part> = c.parts.iter().filter(|p| p.stage == i).collect();
        let cell = cell_width(topology);
        let mut pen = Pen { d: &mut d, x0 };
        x0 += cell;
        pen.text(cell / 2.0, -80.0, stage_title(topology), true);
        if i == 0 {
            pen.text(0.0, y - 8.0, input.clone(), false);
        }
        pen.dot(0.0, y);
        match *topology {
            "inamp-gain" => inamp_cell(&mut pen, &parts, y, cell),
            "rc-highpass" | "rc-lowpass" => rc_cell(&mut pen, &parts, y, cell, topology),
            "sallen-key-highpass" | "sallen-key-lowpass" => {
                sallen_key_cell(&mut pen, &parts, y, cell, topology);
            }
            _ => twin_t_cell(&mut pen, &parts, y, cell),
        }
        pen.dot(cell, y);
        pen.text(cell - 4.0, y - 8.0, output.clone(), false);
    }
    d.prims.push(Prim::Text(
        30.0,
        d.height - 12.0,
        "Op-amps and the in-amp on a ±5 V (or single supply with a mid-rail reference) supply, decoupled with 100 nF at each package; ground = the signal reference. Ideal op-amps assumed in the values.".into(),
        false,
    ));
    d
}

/// The `nth` part of a stage with this role.
fn role<'a>(parts: &[&'a Part], r: &str, nth: usize) -> Option<&'a Part> {
    parts.iter().filter(|p| p.role == r).nth(nth).copied()
}

/// The in-amp with Rg across its gain pins.
fn inamp_cell(pen: &mut Pen, parts: &[&Part], y: f64, cell: f64) {
    if let (Some(u), Some(rg)) = (role(parts, "U", 0), role(parts, "Rg", 0)) {
        pen.line(0.0, y, 60.0, y);
        pen.line(60.0, y - 30.0, 60.0, y + 30.0);
        pen.line(60.0, y - 30.0, 130.0, y);
        pen.line(60.0, y + 30.0, 130.0, y);
        pen.text(95.0, y - 46.0, u.designator.clone(), true);
        pen.text(95.0, y - 34.0, format!("in-amp, G = {:.2}", u.value), true);
        pen.line(130.0, y, cell, y);
        pen.resistor((75.0, y + 60.0), (115.0, y + 60.0), rg);
        pen.line(75.0, y + 60.0, 75.0, y + 24.0);
        pen.line(115.0, y + 60.0, 115.0, y + 12.0);
        pen.text(60.0, y + 95.0, "gain pins", false);
    }
}

/// An RC high- or low-pass and its follower.
fn rc_cell(pen: &mut Pen, parts: &[&Part], y: f64, cell: f64, topology: &str) {
    let (series, shunt) = if topology == "rc-highpass" {
        (role(parts, "C", 0), role(parts, "R", 0))
    } else {
        (role(parts, "R", 0), role(parts, "C", 0))
    };
    if let (Some(s), Some(sh), Some(u)) = (series, shunt, role(parts, "U", 0)) {
        place(pen, (0.0, y), (100.0, y), s);
        pen.dot(100.0, y);
        place(pen, (100.0, y), (100.0, y + 80.0), sh);
        pen.ground(100.0, y + 80.0);
        pen.line(100.0, y, 160.0, y);
        pen.follower(160.0, y, u);
        pen.line(200.0, y, cell, y);
    }
}

/// A unity-gain Sallen–Key stage, its feedback part over the top.
fn sallen_key_cell(pen: &mut Pen, parts: &[&Part], y: f64, cell: f64, topology: &str) {
    let hp = topology == "sallen-key-highpass";
    let (first, second, to_out, to_gnd) = if hp {
        (
            role(parts, "C1", 0),
            role(parts, "C2", 0),
            role(parts, "R1", 0),
            role(parts, "R2", 0),
        )
    } else {
        (
            role(parts, "R1", 0),
            role(parts, "R2", 0),
            role(parts, "C1", 0),
            role(parts, "C2", 0),
        )
    };
    if let (Some(a), Some(b), Some(fb), Some(g), Some(u)) =
        (first, second, to_out, to_gnd, role(parts, "U", 0))
    {
        place(pen, (0.0, y), (70.0, y), a);
        pen.dot(70.0, y);
        place(pen, (70.0, y), (140.0, y), b);
        pen.dot(140.0, y);
        place(pen, (140.0, y), (140.0, y + 90.0), g);
        pen.ground(140.0, y + 90.0);
        pen.line(140.0, y, 160.0, y);
        pen.follower(160.0, y, u);
        pen.line(200.0, y, cell, y);
        pen.dot(215.0, y);
        // Feedback part from the first junction to the output, over the top.
        pen.line(70.0, y, 70.0, y - 45.0);
        place(pen, (70.0, y - 45.0), (215.0, y - 45.0), fb);
        pen.line(215.0, y - 45.0, 215.0, y);
    }
}

/// The twin-T with its output follower, divider and bootstrap follower.
fn twin_t_cell(pen: &mut Pen, parts: &[&Part], y: f64, cell: f64) {
    // Twin-T: the R arm on top (each R = Ra + Rb), the C arm below, the centre
    // parts (2C = two C in parallel, R/2 = two R in parallel) to the driven node g,
    // the output follower, the divider and the bootstrap follower.
    let all = |r: &str| -> Vec<&Part> { parts.iter().filter(|p| p.role == r).copied().collect() };
    let (ra, rb, cs, c2s, halves, us) = (
        all("Ra"),
        all("Rb"),
        all("C"),
        all("2C"),
        all("R/2"),
        all("U"),
    );
    if ra.len() == 2
        && rb.len() == 2
        && cs.len() == 2
        && c2s.len() == 2
        && halves.len() == 4
        && us.len() == 2
        && let (Some(rk1), Some(rk2)) = (role(parts, "Rk1", 0), role(parts, "Rk2", 0))
    {
        // Arms from x = 10 to 170 (centre at 90), centre parts at 90 (R/2) and 40
        // (2C) down to g at y + 110; follower at 200; divider at 290.
        pen.line(0.0, y, 10.0, y);
        pen.line(10.0, y - 30.0, 10.0, y + 30.0);
        pen.group(
            (10.0, y - 30.0),
            (90.0, y - 30.0),
            &[ra[0], rb[0]],
            "+",
            false,
        );
        pen.group(
            (90.0, y - 30.0),
            (170.0, y - 30.0),
            &[ra[1], rb[1]],
            "+",
            false,
        );
        place(pen, (10.0, y + 30.0), (90.0, y + 30.0), cs[0]);
        place(pen, (90.0, y + 30.0), (170.0, y + 30.0), cs[1]);
        pen.line(170.0, y - 30.0, 170.0, y + 30.0);
        pen.dot(170.0, y);
        pen.dot(90.0, y - 30.0);
        pen.dot(90.0, y + 30.0);
        pen.group(
            (90.0, y + 30.0),
            (90.0, y + 110.0),
            &[halves[0], halves[1], halves[2], halves[3]],
            "+",
            false,
        );
        pen.text(
            4.0,
            y + 172.0,
            "R/2 = (1st+2nd) || (3rd+4th); the three g are one node",
            false,
        );
        pen.text(90.0, y + 124.0, "g", true);
        // 2C from node a up to g (a net label: the same node as below).
        pen.line(90.0, y - 30.0, 90.0, y - 70.0);
        pen.group(
            (90.0, y - 70.0),
            (90.0, y - 100.0),
            &[c2s[0], c2s[1]],
            "||",
            true,
        );
        pen.text(90.0, y - 104.0, "g", true);
        pen.line(170.0, y, 200.0, y);
        pen.follower(200.0, y, us[0]);
        pen.line(240.0, y, cell, y);
        pen.dot(290.0, y);
        place(pen, (290.0, y), (290.0, y + 70.0), rk1);
        pen.dot(290.0, y + 70.0);
        place(pen, (290.0, y + 70.0), (290.0, y + 140.0), rk2);
        pen.ground(290.0, y + 140.0);
        // Bootstrap: k·Vout from the divider through the second follower to g.
        pen.line(290.0, y + 70.0, 190.0, y + 70.0);
        pen.line(190.0, y + 70.0, 190.0, y + 110.0);
        pen.line(190.0, y + 110.0, 200.0, y + 110.0);
        pen.follower(200.0, y + 110.0, us[1]);
        pen.line(240.0, y + 110.0, 252.0, y + 110.0);
        pen.dot(252.0, y + 110.0);
        pen.text(256.0, y + 114.0, "g", false);
        pen.text(
            300.0,
            y + 150.0,
            format!("k·Vout, k = {:.4}", rk2.value / (rk1.value + rk2.value)),
            false,
        );
    }
}

/// Width of a stage's cell.
fn cell_width(topology: &str) -> f64 {
    match topology {
        "twin-t" => 400.0,
        _ => CELL_W,
    }
}

/// Draws a symbol's body centred at a point (horizontal or not); returns its half extents.
type Body = fn(&mut Pen<'_>, (f64, f64), bool) -> (f64, f64);

/// A resistor's box centred at `c`; returns its half width and height.
fn resistor_body(pen: &mut Pen<'_>, c: (f64, f64), horizontal: bool) -> (f64, f64) {
    let (w, h) = if horizontal { (12.0, 5.0) } else { (5.0, 12.0) };
    pen.line(c.0 - w, c.1 - h, c.0 + w, c.1 - h);
    pen.line(c.0 + w, c.1 - h, c.0 + w, c.1 + h);
    pen.line(c.0 + w, c.1 + h, c.0 - w, c.1 + h);
    pen.line(c.0 - w, c.1 + h, c.0 - w, c.1 - h);
    (w, h)
}

/// A capacitor's plates centred at `c`; returns its half width and height.
fn capacitor_body(pen: &mut Pen<'_>, c: (f64, f64), horizontal: bool) -> (f64, f64) {
    if horizontal {
        pen.line(c.0 - 3.0, c.1 - 9.0, c.0 - 3.0, c.1 + 9.0);
        pen.line(c.0 + 3.0, c.1 - 9.0, c.0 + 3.0, c.1 + 9.0);
        (3.0, 9.0)
    } else {
        pen.line(c.0 - 9.0, c.1 - 3.0, c.0 + 9.0, c.1 - 3.0);
        pen.line(c.0 - 9.0, c.1 + 3.0, c.0 + 9.0, c.1 + 3.0);
        (9.0, 3.0)
    }
}

/// A part between two points, the right symbol for its kind.
fn place(pen: &mut Pen<'_>, a: (f64, f64), b: (f64, f64), p: &Part) {
    match p.kind {
        Kind::Capacitor => pen.capacitor(a, b, p),
        _ => pen.resistor(a, b, p),
    }
}

fn stage_title(topology: &str) -> &'static str {
    match topology {
        "inamp-gain" => "In-amp gain",
        "rc-highpass" => "RC high-pass + buffer",
        "rc-lowpass" => "RC low-pass + buffer",
        "sallen-key-highpass" => "Sallen–Key high-pass",
        "sallen-key-lowpass" => "Sallen–Key low-pass",
        _ => "Twin-T notch, bootstrapped",
    }
}

fn esc(t: &str) -> String {
    t.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

/// The drawing as an SVG document.
pub fn svg(d: &Drawing) -> String {
    let mut s = format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w:.0}\" height=\"{h:.0}\" viewBox=\"0 0 {w:.0} {h:.0}\" font-family=\"sans-serif\" font-size=\"11\">\n<rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n<g stroke=\"#1d2b3a\" stroke-width=\"1.4\" fill=\"none\">\n",
        w = d.width,
        h = d.height
    );
    for p in &d.prims {
        if let Prim::Line(x1, y1, x2, y2) = p {
            s += &format!("<line x1=\"{x1:.1}\" y1=\"{y1:.1}\" x2=\"{x2:.1}\" y2=\"{y2:.1}\"/>\n");
        }
    }
    s += "</g>\n<g fill=\"#1d2b3a\">\n";
    for p in &d.prims {
        match p {
            Prim::Dot(x, y) => s += &format!("<circle cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"2.5\"/>\n"),
            Prim::Text(x, y, t, centre) => {
                s += &format!(
                    "<text x=\"{x:.1}\" y=\"{y:.1}\"{}>{}</text>\n",
                    if *centre {
                        " text-anchor=\"middle\""
                    } else {
                        ""
                    },
                    esc(t)
                )
            }
            Prim::Line(..) => {}
        }
    }
    s += "</g>\n</svg>\n";
    s
}
