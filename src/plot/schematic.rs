//! Circuit schematic: a [`Circuit`] drawn from its topology as an SVG string.
//!
//! Layout (deterministic, no randomness, no hash order): the series elements
//! form a graph on the nodes. A breadth-first search from the first pump's
//! node gives every node a depth (its column, left to right) and a spanning
//! tree. The tree is laid out as a trunk and branches: each node continues
//! in its own row with the child whose subtree is deepest, and every other
//! child opens a new row below (rows are handed out depth first, so a branch
//! and its sub-branches stay together). A node's position is (column, row),
//! so no two nodes share one. Series elements that close a loop (not in the
//! tree) are routed through lanes below all rows. Shunt elements and further
//! pumps hang above their node; taps are red diamonds with their names.
//! Components not reached from a pump start new rows of their own.

use std::fmt::Write;

use crate::circuit::{Circuit, TapLocation};
use crate::elements::{Connection, NodeId};
use crate::html::escape as esc;

/// Font family written into the picture (the embedded font first).
const FONT: &str = "DejaVu Sans, sans-serif";
/// Smallest distance between two columns of nodes, px.
const COL_MIN: f64 = 150.0;
/// Distance between two rows of nodes, px.
const ROW_H: f64 = 160.0;
/// Room left of the first column (for the pump), px.
const LEFT: f64 = 120.0;
/// Room above the first row (title and hanging elements), px.
const TOP: f64 = 150.0;
/// Distance between loop lanes below the rows, px.
const LANE_H: f64 = 56.0;
/// Approximate width of one character of 12 px text, px.
const CHAR_W: f64 = 7.2;

const INK: &str = "#202020";
const GREY: &str = "#707070";
const TAP: &str = "#c00000";
const LIGHT: &str = "#d8d8d8";

/// Node positions of a schematic, in pixels (for tests and callers that
/// place things next to nodes).
#[derive(Debug, Clone, PartialEq)]
pub struct SchematicLayout {
    /// Centre of every node of the circuit, by node index.
    pub nodes: Vec<(f64, f64)>,
    /// Picture width and height, px.
    pub size: (f64, f64),
}

/// One series element drawn between two nodes.
struct Edge {
    element: usize,
    /// drawn from `from` to `to` (the tree's parent to child)
    from: NodeId,
    to: NodeId,
}

struct Layout {
    /// x of the first column
    left: f64,
    col_w: f64,
    depth: Vec<usize>,
    row: Vec<usize>,
    rows: usize,
    tree: Vec<Edge>,
    loops: Vec<Edge>,
    /// the node whose pump is drawn on its left (the first pump's node)
    root_pump: Option<(usize, NodeId)>,
}

impl Layout {
    fn xy(&self, n: NodeId) -> (f64, f64) {
        (
            self.left + self.depth[n] as f64 * self.col_w,
            TOP + self.row[n] as f64 * ROW_H,
        )
    }
}

fn text_w(s: &str) -> f64 {
    s.chars().count() as f64 * CHAR_W
}

/// The kind name that decides the symbol: the circuit-file name of the kind.
fn kind_of(c: &Circuit, element: usize) -> &'static str {
    c.elements[element].kind.name()
}

/// What hangs above a node: pumps other than the one drawn at the left of the
/// trunk, and shunt elements, in file order.
enum Hanging {
    Pump(usize),
    Element(usize),
}

fn hanging(c: &Circuit, root_pump: Option<(usize, NodeId)>) -> Vec<Vec<Hanging>> {
    let mut at: Vec<Vec<Hanging>> = (0..c.nodes.len()).map(|_| Vec::new()).collect();
    for (i, p) in c.pumps.iter().enumerate() {
        if root_pump.map(|(k, _)| k) != Some(i) {
            at[p.node].push(Hanging::Pump(i));
        }
    }
    for (i, e) in c.elements.iter().enumerate() {
        if let Connection::Shunt { at: n } = e.connection {
            at[n].push(Hanging::Element(i));
        }
    }
    at
}

fn hanging_label<'a>(c: &'a Circuit, h: &Hanging) -> &'a str {
    match h {
        Hanging::Pump(i) => &c.pumps[*i].name,
        Hanging::Element(i) => &c.elements[*i].name,
    }
}

/// Spacing of the elements hanging above one node, px.
fn hang_spacing(c: &Circuit, hang: &[Vec<Hanging>]) -> f64 {
    hang.iter()
        .flatten()
        .map(|h| text_w(hanging_label(c, h)) + 14.0)
        .fold(64.0, f64::max)
}

fn layout(c: &Circuit, hang: &[Vec<Hanging>]) -> Layout {
    let n = c.nodes.len();
    // adjacency over series elements, in element order
    let mut adj: Vec<Vec<(usize, NodeId)>> = vec![Vec::new(); n];
    for (i, e) in c.elements.iter().enumerate() {
        if let Connection::Series { a, b } = e.connection {
            adj[a].push((i, b));
            if a != b {
                adj[b].push((i, a));
            }
        }
    }
    let root_pump = c.pumps.first().map(|p| (0, p.node));
    let mut roots: Vec<NodeId> = c.pumps.iter().map(|p| p.node).collect();
    roots.extend(0..n);
    let mut depth = vec![usize::MAX; n];
    let mut parent_edge: Vec<Option<usize>> = vec![None; n];
    let mut children: Vec<Vec<NodeId>> = vec![Vec::new(); n];
    let mut in_tree = vec![false; c.elements.len()];
    let mut order_roots = Vec::new();
    for &r in &roots {
        if depth[r] != usize::MAX {
            continue;
        }
        order_roots.push(r);
        depth[r] = 0;
        let mut queue = std::collections::VecDeque::from([r]);
        while let Some(u) = queue.pop_front() {
            for &(e, v) in &adj[u] {
                if depth[v] == usize::MAX {
                    depth[v] = depth[u] + 1;
                    parent_edge[v] = Some(e);
                    in_tree[e] = true;
                    children[u].push(v);
                    queue.push_back(v);
                }
            }
        }
    }
    // height of each subtree (deepest descendant below it), children first
    let mut by_depth: Vec<NodeId> = (0..n).collect();
    by_depth.sort_by_key(|&v| std::cmp::Reverse(depth[v]));
    let mut height = vec![0usize; n];
    for &v in &by_depth {
        height[v] = children[v]
            .iter()
            .map(|&w| height[w] + 1)
            .max()
            .unwrap_or(0);
    }
    for ch in &mut children {
        // the deepest subtree continues the row (stable: file order on ties)
        ch.sort_by_key(|&w| std::cmp::Reverse(height[w]));
    }
    // rows, depth first
    let mut row = vec![0usize; n];
    let mut next_row = 0usize;
    for &r in &order_roots {
        let mut stack: Vec<(NodeId, Option<usize>)> = vec![(r, None)];
        while let Some((u, given)) = stack.pop() {
            row[u] = given.unwrap_or_else(|| {
                next_row += 1;
                next_row - 1
            });
            for (k, &w) in children[u].iter().enumerate().rev() {
                stack.push((w, (k == 0).then_some(row[u])));
            }
        }
    }
    let mut tree = Vec::new();
    let mut loops = Vec::new();
    for (i, e) in c.elements.iter().enumerate() {
        if let Connection::Series { a, b } = e.connection {
            if in_tree[i] {
                // parent to child
                let (from, to) = if parent_edge[b] == Some(i) && depth[a] < depth[b] {
                    (a, b)
                } else {
                    (b, a)
                };
                tree.push(Edge {
                    element: i,
                    from,
                    to,
                });
            } else {
                loops.push(Edge {
                    element: i,
                    from: a,
                    to: b,
                });
            }
        }
    }
    let series_w = c
        .elements
        .iter()
        .filter(|e| matches!(e.connection, Connection::Series { .. }))
        .map(|e| text_w(&e.name))
        .fold(0.0, f64::max);
    let sp = hang_spacing(c, hang);
    let fan_w = hang.iter().map(|h| h.len() as f64 * sp).fold(0.0, f64::max);
    let col_w = COL_MIN
        .max(series_w + 70.0)
        .max(fan_w + series_w.max(60.0) + 20.0);
    let left = c
        .pumps
        .first()
        .map_or(LEFT, |p| LEFT.max(text_w(&p.name) / 2.0 + 84.0));
    Layout {
        left,
        col_w,
        depth,
        row,
        rows: next_row.max(1),
        tree,
        loops,
        root_pump,
    }
}

fn text(out: &mut String, x: f64, y: f64, s: &str, size: f64, fill: &str, anchor: &str) {
    let _ = writeln!(
        out,
        r#"<text x="{x:.1}" y="{y:.1}" font-size="{size}" fill="{fill}" text-anchor="{anchor}">{}</text>"#,
        esc(s)
    );
}

/// A rectangle with its top-left corner at (x, y), outlined in ink.
#[allow(clippy::too_many_arguments)]
fn rect(out: &mut String, x: f64, y: f64, w: f64, h: f64, rx: f64, fill: &str, stroke_w: f64) {
    let _ = writeln!(
        out,
        r#"<rect x="{x:.1}" y="{y:.1}" width="{w:.1}" height="{h:.1}" rx="{rx:.1}" fill="{fill}" stroke="{INK}" stroke-width="{stroke_w}"/>"#
    );
}

fn line(out: &mut String, pts: &[(f64, f64)], stroke: &str, width: f64) {
    let p: Vec<String> = pts.iter().map(|(x, y)| format!("{x:.1},{y:.1}")).collect();
    let _ = writeln!(
        out,
        r#"<polyline points="{}" fill="none" stroke="{stroke}" stroke-width="{width}" stroke-linejoin="round"/>"#,
        p.join(" ")
    );
}

/// Draws the symbol of a series element centred at (x, y) on a horizontal
/// line, in a group of class `symbol KIND`; `forward` says the element's
/// file `from` end is on the left (for a check valve's direction).
fn series_symbol(out: &mut String, kind: &str, x: f64, y: f64, forward: bool) {
    let _ = writeln!(out, r#"<g class="symbol {kind}">"#);
    series_shape(out, kind, x, y, forward);
    out.push_str("</g>\n");
}

/// Height of a series symbol above its line, px (its name goes above it).
fn series_height(kind: &str) -> f64 {
    match kind {
        "relief_valve" => 26.0,
        "cylinder" => 26.0,
        "inline_pulsation_damper" => 28.0,
        _ => 14.0,
    }
}

fn series_shape(out: &mut String, kind: &str, x: f64, y: f64, forward: bool) {
    match kind {
        "tube" => {
            // a pipe: two parallel walls
            rect(out, x - 28.0, y - 5.0, 56.0, 10.0, 0.0, "white", 1.5);
        }
        "hose" => {
            // a flexible line: a wave
            let mut d = format!("M{:.1},{y:.1}", x - 28.0);
            for _ in 0..4 {
                d.push_str(" q3.5,-9 7,0 q3.5,9 7,0");
            }
            let _ = writeln!(
                out,
                r#"<rect x="{:.1}" y="{:.1}" width="56" height="20" fill="white"/><path d="{d}" fill="none" stroke="{INK}" stroke-width="2"/>"#,
                x - 28.0,
                y - 10.0
            );
        }
        "orifice" => {
            // a restriction: two wedges pointing at the flow
            let _ = writeln!(
                out,
                r#"<path d="M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} Z M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} Z" fill="{INK}"/>"#,
                x - 6.0,
                y - 14.0,
                x + 6.0,
                y - 14.0,
                x,
                y - 3.0,
                x - 6.0,
                y + 14.0,
                x + 6.0,
                y + 14.0,
                x,
                y + 3.0
            );
        }
        "inertance" => {
            // a short passage of mass: a filled bar
            rect(out, x - 15.0, y - 4.0, 30.0, 8.0, 0.0, INK, 0.0);
        }
        "expansion_chamber" => {
            rect(out, x - 22.0, y - 13.0, 44.0, 26.0, 3.0, "white", 2.0);
        }
        "check_valve" => {
            // a ball held against its seat; flow lifts it off (seat upstream)
            let d = if forward { 1.0 } else { -1.0 };
            rect(out, x - 14.0, y - 11.0, 28.0, 22.0, 0.0, "white", 0.0);
            path(
                out,
                &format!(
                    "M{:.1},{:.1} L{:.1},{y:.1} L{:.1},{:.1}",
                    x - 3.0 * d,
                    y - 10.0,
                    x - 11.0 * d,
                    x - 3.0 * d,
                    y + 10.0
                ),
                "none",
                2.0,
            );
            circle(out, x + 3.0 * d, y, 6.5, "white");
        }
        "relief_valve" => {
            // a valve envelope with its flow path offset (closed until it
            // cracks) and the spring that sets the cracking pressure
            rect(out, x - 12.0, y - 12.0, 24.0, 24.0, 0.0, "white", 1.5);
            arrow(out, (x - 8.0, y + 5.0), (x + 8.0, y + 5.0));
            spring(out, (x, y - 12.0), (x, y - 26.0));
        }
        "cylinder" => {
            // the barrel above the line, fed at the cap port and the rod port
            // (the line is broken between them), the rod out on the right
            rect(out, x - 16.0, y - 3.0, 30.0, 6.0, 0.0, "white", 0.0);
            line(out, &[(x - 16.0, y), (x - 16.0, y - 8.0)], INK, 2.0);
            line(out, &[(x + 14.0, y), (x + 14.0, y - 8.0)], INK, 2.0);
            rect(out, x - 22.0, y - 26.0, 44.0, 18.0, 0.0, "white", 2.0);
            line(out, &[(x - 4.0, y - 25.0), (x - 4.0, y - 9.0)], INK, 3.0);
            line(out, &[(x - 4.0, y - 17.0), (x + 34.0, y - 17.0)], INK, 3.0);
        }
        "inline_pulsation_damper" => {
            // a gas-charged vessel the flow passes through at its bottom
            vessel(out, x, y + 12.0);
        }
        _ => generic_box(out, kind, x, y),
    }
}

fn path(out: &mut String, d: &str, fill: &str, width: f64) {
    let _ = writeln!(
        out,
        r#"<path d="{d}" fill="{fill}" stroke="{INK}" stroke-width="{width}" stroke-linejoin="round"/>"#
    );
}

fn circle(out: &mut String, x: f64, y: f64, r: f64, fill: &str) {
    let _ = writeln!(
        out,
        r#"<circle cx="{x:.1}" cy="{y:.1}" r="{r:.1}" fill="{fill}" stroke="{INK}" stroke-width="2"/>"#
    );
}

/// A straight arrow from `a` to `b` with a filled head at `b`.
fn arrow(out: &mut String, a: (f64, f64), b: (f64, f64)) {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let len = (dx * dx + dy * dy).sqrt().max(1e-9);
    let (ux, uy) = (dx / len, dy / len);
    let base = (b.0 - 6.0 * ux, b.1 - 6.0 * uy);
    line(out, &[a, base], INK, 1.5);
    path(
        out,
        &format!(
            "M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} Z",
            b.0,
            b.1,
            base.0 - 3.5 * uy,
            base.1 + 3.5 * ux,
            base.0 + 3.5 * uy,
            base.1 - 3.5 * ux
        ),
        INK,
        1.0,
    );
}

/// A zigzag spring from `a` to `b` (six strokes).
fn spring(out: &mut String, a: (f64, f64), b: (f64, f64)) {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let len = (dx * dx + dy * dy).sqrt().max(1e-9);
    let (nx, ny) = (-dy / len * 4.5, dx / len * 4.5);
    let mut pts = vec![a];
    for i in 1..6 {
        let t = f64::from(i) / 6.0;
        let side = if i % 2 == 1 { 1.0 } else { -1.0 };
        pts.push((a.0 + t * dx + side * nx, a.1 + t * dy + side * ny));
    }
    pts.push(b);
    line(out, &pts, INK, 1.5);
}

/// A gas-charged vessel: a capsule with its separating membrane, standing
/// on (x, bottom).
fn vessel(out: &mut String, x: f64, bottom: f64) {
    let _ = writeln!(
        out,
        r#"<rect x="{:.1}" y="{:.1}" width="24" height="40" rx="12" fill="white" stroke="{INK}" stroke-width="2"/><line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{INK}" stroke-width="1.5"/>"#,
        x - 12.0,
        bottom - 40.0,
        x - 12.0,
        bottom - 22.0,
        x + 12.0,
        bottom - 22.0
    );
}

fn generic_box(out: &mut String, kind: &str, x: f64, y: f64) {
    let w = text_w(kind) * 0.85 + 10.0;
    rect(out, x - w / 2.0, y - 9.0, w, 18.0, 0.0, "white", 1.5);
    text(out, x, y + 4.0, kind, 10.0, INK, "middle");
}

/// Draws the symbol of something hanging above a node, in a group of
/// class `symbol KIND`; (x, y) is the point where its stub meets the symbol
/// (the symbol lies above it).
fn hanging_symbol(out: &mut String, kind: &str, x: f64, y: f64) {
    let _ = writeln!(out, r#"<g class="symbol {kind}">"#);
    hanging_shape(out, kind, x, y);
    out.push_str("</g>\n");
}

fn hanging_shape(out: &mut String, kind: &str, x: f64, y: f64) {
    match kind {
        "pump" => pump_symbol(out, x, y - 15.0, true),
        "volume" => {
            rect(out, x - 15.0, y - 26.0, 30.0, 26.0, 0.0, "white", 2.0);
        }
        // a gas-charged vessel: a capsule with the separating membrane
        "pulsation_damper" | "inline_pulsation_damper" => vessel(out, x, y),
        "relief_valve" => {
            // to tank: the valve envelope with its offset flow path and
            // spring, draining to a tank above it
            rect(out, x - 12.0, y - 24.0, 24.0, 24.0, 0.0, "white", 1.5);
            arrow(out, (x - 5.0, y - 4.0), (x - 5.0, y - 20.0));
            spring(out, (x + 12.0, y - 12.0), (x + 26.0, y - 12.0));
            line(out, &[(x, y - 24.0), (x, y - 30.0)], INK, 1.5);
            tank_symbol(out, x, y - 30.0);
        }
        "cylinder" => {
            // the barrel fed from below, its piston and rod carrying the load
            rect(out, x - 11.0, y - 40.0, 22.0, 40.0, 0.0, "white", 2.0);
            line(out, &[(x - 10.0, y - 22.0), (x + 10.0, y - 22.0)], INK, 3.0);
            line(out, &[(x, y - 22.0), (x, y - 52.0)], INK, 3.0);
            rect(out, x - 9.0, y - 62.0, 18.0, 10.0, 0.0, LIGHT, 1.5);
        }
        "helmholtz_resonator" => {
            // a bottle: neck and cavity
            let _ = writeln!(
                out,
                r#"<rect x="{:.1}" y="{:.1}" width="8" height="10" fill="white" stroke="{INK}" stroke-width="1.5"/><circle cx="{x:.1}" cy="{:.1}" r="14" fill="white" stroke="{INK}" stroke-width="2"/>"#,
                x - 4.0,
                y - 10.0,
                y - 24.0
            );
        }
        "side_branch" => {
            // a closed stub of line
            let _ = writeln!(
                out,
                r#"<rect x="{:.1}" y="{:.1}" width="10" height="40" fill="white" stroke="{INK}" stroke-width="1.5"/><line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{INK}" stroke-width="4"/>"#,
                x - 5.0,
                y - 40.0,
                x - 8.0,
                y - 40.0,
                x + 8.0,
                y - 40.0
            );
        }
        "tank" => tank_symbol(out, x, y),
        "load_valve" => {
            // a valve (bow tie) draining to a tank
            let _ = writeln!(
                out,
                r#"<path d="M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} Z" fill="white" stroke="{INK}" stroke-width="1.5"/>"#,
                x - 9.0,
                y - 2.0,
                x + 9.0,
                y - 20.0,
                x + 9.0,
                y - 2.0,
                x - 9.0,
                y - 20.0
            );
            line(out, &[(x, y - 20.0), (x, y - 26.0)], INK, 1.5);
            tank_symbol(out, x, y - 26.0);
        }
        "closed_end" => {
            let _ = writeln!(
                out,
                r#"<line x1="{:.1}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="{INK}" stroke-width="5"/>"#,
                x - 12.0,
                x + 12.0
            );
        }
        "anechoic_end" => {
            // a wedge that absorbs the waves
            let _ = writeln!(
                out,
                r#"<path d="M{:.1},{y:.1} L{:.1},{y:.1} L{x:.1},{:.1} Z" fill="{LIGHT}" stroke="{INK}" stroke-width="1.5"/>"#,
                x - 12.0,
                x + 12.0,
                y - 30.0
            );
        }
        _ => generic_box(out, kind, x, y - 10.0),
    }
}

/// Height of a hanging symbol above its connection point, px.
fn symbol_height(kind: &str) -> f64 {
    match kind {
        "pump" => 30.0,
        "volume" => 26.0,
        "pulsation_damper" | "inline_pulsation_damper" | "side_branch" => 40.0,
        "relief_valve" => 52.0,
        "cylinder" => 62.0,
        "helmholtz_resonator" => 38.0,
        "tank" => 22.0,
        "load_valve" => 48.0,
        "closed_end" => 4.0,
        "anechoic_end" => 30.0,
        _ => 20.0,
    }
}

fn tank_symbol(out: &mut String, x: f64, y: f64) {
    // an open vessel with its oil level
    let _ = writeln!(
        out,
        r#"<path d="M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1}" fill="none" stroke="{INK}" stroke-width="2"/><line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{INK}" stroke-width="1"/>"#,
        x - 16.0,
        y - 22.0,
        x - 16.0,
        y,
        x + 16.0,
        y,
        x + 16.0,
        y - 22.0,
        x - 12.0,
        y - 12.0,
        x + 12.0,
        y - 12.0
    );
}

/// A pump: a circle with a filled triangle pointing at its outlet (right, or
/// up for a pump hanging above a node).
fn pump_symbol(out: &mut String, x: f64, y: f64, up: bool) {
    let tri = if up {
        format!(
            "M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} Z",
            x,
            y - 13.0,
            x - 7.0,
            y - 2.0,
            x + 7.0,
            y - 2.0
        )
    } else {
        format!(
            "M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} Z",
            x + 13.0,
            y,
            x + 2.0,
            y - 7.0,
            x + 2.0,
            y + 7.0
        )
    };
    let _ = writeln!(
        out,
        r#"<circle cx="{x:.1}" cy="{y:.1}" r="15" fill="white" stroke="{INK}" stroke-width="2"/><path d="{tri}" fill="{INK}"/>"#
    );
}

/// Where a tap inside a tube or hose is drawn: the point `f` of the way along
/// the element's drawn path (from its file "from" end).
fn along(path: &[(f64, f64)], f: f64) -> (f64, f64) {
    let lens: Vec<f64> = path
        .windows(2)
        .map(|w| ((w[1].0 - w[0].0).powi(2) + (w[1].1 - w[0].1).powi(2)).sqrt())
        .collect();
    let total: f64 = lens.iter().sum();
    let mut s = f.clamp(0.0, 1.0) * total;
    for (w, l) in path.windows(2).zip(&lens) {
        if s <= *l && *l > 0.0 {
            let t = s / l;
            return (
                w[0].0 + t * (w[1].0 - w[0].0),
                w[0].1 + t * (w[1].1 - w[0].1),
            );
        }
        s -= l;
    }
    path.last().copied().unwrap_or((0.0, 0.0))
}

/// The node positions the schematic of `circuit` uses.
pub fn schematic_layout(circuit: &Circuit) -> SchematicLayout {
    let hang = hanging(circuit, circuit.pumps.first().map(|p| (0, p.node)));
    let l = layout(circuit, &hang);
    let nodes = (0..circuit.nodes.len()).map(|n| l.xy(n)).collect();
    SchematicLayout {
        nodes,
        size: picture_size(circuit, &l),
    }
}

/// y of loop lane `k` (the lanes lie below the last row and its labels; the
/// legend comes after the last lane).
fn lane_y(l: &Layout, k: usize) -> f64 {
    TOP + (l.rows - 1) as f64 * ROW_H + 80.0 + k as f64 * LANE_H
}

fn picture_size(c: &Circuit, l: &Layout) -> (f64, f64) {
    let max_depth = l.depth.iter().copied().max().unwrap_or(0);
    let w = l.left + max_depth as f64 * l.col_w + l.col_w.max(200.0);
    let title_w = c.title.as_deref().map_or(0.0, |t| text_w(t) * 1.3 + 40.0);
    let legend_w = 30.0
        + legend_kinds(c)
            .iter()
            .map(|(k, _)| 90.0 + text_w(&k.replace('_', " ")) * 0.9)
            .sum::<f64>();
    let h = lane_y(l, l.loops.len()) + 70.0;
    (w.max(title_w).max(legend_w).max(420.0), h)
}

/// Draws a series element: its path, its symbol at `mid` and its name above;
/// `forward`: the element's file `from` end is drawn on the left of `mid`.
fn connection(
    out: &mut String,
    c: &Circuit,
    element: usize,
    pts: &[(f64, f64)],
    mid: (f64, f64),
    forward: bool,
) {
    line(out, pts, INK, 2.0);
    let kind = kind_of(c, element);
    series_symbol(out, kind, mid.0, mid.1, forward);
    let name = &c.elements[element].name;
    text(
        out,
        mid.0,
        mid.1 - series_height(kind) - 6.0,
        name,
        12.0,
        INK,
        "middle",
    );
}

/// Draws `circuit` as a schematic and returns the SVG document.
///
/// Every element appears with a symbol for its kind and its name, every pump
/// with its name, every tap as a red diamond with its name, every node with
/// its name in grey; a legend lists the kinds used. The same circuit always
/// gives the same text. Names are escaped, so any name is safe to embed.
pub fn schematic_svg(circuit: &Circuit) -> String {
    let c = circuit;
    let hang = hanging(c, c.pumps.first().map(|p| (0, p.node)));
    let l = layout(c, &hang);
    let (w, h) = picture_size(c, &l);
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w:.0}" height="{h:.0}" viewBox="0 0 {w:.0} {h:.0}" font-family="{FONT}">"#
    );
    let _ = writeln!(out, r#"<rect width="100%" height="100%" fill="white"/>"#);
    let title = c.title.as_deref().unwrap_or("Circuit");
    text(&mut out, 20.0, 32.0, title, 18.0, INK, "start");

    // paths of the series elements (for along-tube taps)
    let mut paths: Vec<Vec<(f64, f64)>> = vec![Vec::new(); c.elements.len()];
    // tree edges: straight in a row, or down from the parent then along
    for e in &l.tree {
        let (x0, y0) = l.xy(e.from);
        let (x1, y1) = l.xy(e.to);
        let pts = if (y0 - y1).abs() < 0.5 {
            vec![(x0, y0), (x1, y1)]
        } else {
            vec![(x0, y0), (x0, y1), (x1, y1)]
        };
        // drawn from the parent (left) to the child: forward when the
        // file's "from" end is the parent
        let from_first = matches!(
            c.elements[e.element].connection,
            Connection::Series { a, .. } if a == e.from
        );
        connection(
            &mut out,
            c,
            e.element,
            &pts,
            ((pts[pts.len() - 2].0 + x1) / 2.0, y1),
            from_first,
        );
        // the file's "from" end first
        let mut p = pts;
        if !from_first {
            p.reverse();
        }
        paths[e.element] = p;
    }
    // loops through lanes below the rows
    for (k, e) in l.loops.iter().enumerate() {
        let (x0, y0) = l.xy(e.from);
        let (x1, y1) = l.xy(e.to);
        let lane = lane_y(&l, k);
        // verticals a little left of the nodes' columns, so that they pass
        // no node of another row
        let off = 14.0 * (k + 1) as f64;
        let x_end = if (x1 - x0).abs() >= 100.0 {
            x1 - off
        } else {
            x0 + 100.0
        };
        let pts = vec![
            (x0, y0),
            (x0 - off, y0 + off),
            (x0 - off, lane),
            (x_end, lane),
            (x_end, y1 + off),
            (x1, y1),
        ];
        // the lane runs from the file's "from" node: forward when it runs right
        connection(
            &mut out,
            c,
            e.element,
            &pts,
            ((x0 - off + x_end) / 2.0, lane),
            x_end >= x0 - off,
        );
        paths[e.element] = pts;
    }
    // pump at the left of the trunk
    if let Some((p, n)) = l.root_pump {
        let (x, y) = l.xy(n);
        line(&mut out, &[(x - 70.0, y), (x, y)], INK, 2.0);
        pump_symbol(&mut out, x - 70.0, y, false);
        text(
            &mut out,
            x - 70.0,
            y - 24.0,
            &c.pumps[p].name,
            12.0,
            INK,
            "middle",
        );
    }
    // hanging elements above their node
    let sp = hang_spacing(c, &hang);
    for (n, items) in hang.iter().enumerate() {
        let (x, y) = l.xy(n);
        let k = items.len() as f64;
        for (i, item) in items.iter().enumerate() {
            let hx = x + (i as f64 - (k - 1.0) / 2.0) * sp;
            let top = y - 40.0;
            line(
                &mut out,
                &[(x, y), (x, y - 20.0), (hx, y - 20.0), (hx, top)],
                INK,
                2.0,
            );
            let kind = match item {
                Hanging::Pump(_) => "pump",
                Hanging::Element(e) => kind_of(c, *e),
            };
            hanging_symbol(&mut out, kind, hx, top);
            let label_y = top - symbol_height(kind) - 8.0;
            text(
                &mut out,
                hx,
                label_y,
                hanging_label(c, item),
                12.0,
                INK,
                "middle",
            );
        }
    }
    // nodes, their names, taps at nodes
    let mut taps_at: Vec<Vec<usize>> = vec![Vec::new(); c.nodes.len()];
    for (i, t) in c.taps.iter().enumerate() {
        if let TapLocation::Node(n) = t.location {
            taps_at[n].push(i);
        }
    }
    for (n, node) in c.nodes.iter().enumerate() {
        let (x, y) = l.xy(n);
        let _ = writeln!(
            out,
            r#"<circle cx="{x:.1}" cy="{y:.1}" r="3.5" fill="{INK}"/>"#
        );
        text(&mut out, x + 6.0, y + 17.0, &node.name, 11.0, GREY, "start");
        for (k, &t) in taps_at[n].iter().enumerate() {
            diamond(&mut out, x, y);
            text(
                &mut out,
                x + 6.0,
                y + 32.0 + 14.0 * k as f64,
                &c.taps[t].name,
                11.0,
                TAP,
                "start",
            );
        }
    }
    // taps inside tubes and hoses
    for t in &c.taps {
        if let TapLocation::AlongTube {
            element,
            distance_m,
        } = t.location
        {
            let len = c.elements[element]
                .kind
                .line()
                .map_or(1.0, |ln| ln.length_m);
            let f = if len > 0.0 { distance_m / len } else { 0.0 };
            if paths[element].len() < 2 {
                continue;
            }
            let (x, y) = along(&paths[element], f);
            diamond(&mut out, x, y);
            text(&mut out, x, y + 30.0, &t.name, 11.0, TAP, "middle");
        }
    }
    legend(&mut out, c, h - 20.0);
    out.push_str("</svg>\n");
    out
}

fn diamond(out: &mut String, x: f64, y: f64) {
    let _ = writeln!(
        out,
        r#"<path d="M{x:.1},{:.1} L{:.1},{y:.1} L{x:.1},{:.1} L{:.1},{y:.1} Z" fill="{TAP}" stroke="white" stroke-width="1"/>"#,
        y - 7.0,
        x + 7.0,
        y + 7.0,
        x - 7.0
    );
}

/// The kinds a legend lists, in order of appearance, and whether each is
/// drawn hanging (a shunt).
fn legend_kinds(c: &Circuit) -> Vec<(&'static str, bool)> {
    let mut kinds: Vec<(&'static str, bool)> = Vec::new();
    if !c.pumps.is_empty() {
        kinds.push(("pump", false));
    }
    for e in &c.elements {
        let k = e.kind.name();
        if !kinds.iter().any(|(n, _)| *n == k) {
            kinds.push((k, matches!(e.connection, Connection::Shunt { .. })));
        }
    }
    if !c.taps.is_empty() {
        kinds.push(("tap", false));
    }
    kinds
}

/// A row of the kinds used, each with its symbol.
fn legend(out: &mut String, c: &Circuit, y: f64) {
    let mut x = 30.0;
    for (k, shunt) in legend_kinds(c) {
        match k {
            "pump" => pump_symbol(out, x, y - 8.0, false),
            "tap" => diamond(out, x, y - 6.0),
            _ if shunt => hanging_symbol(out, k, x, y + 4.0),
            _ => {
                line(out, &[(x - 30.0, y - 6.0), (x + 30.0, y - 6.0)], INK, 2.0);
                series_symbol(out, k, x, y - 6.0, true);
            }
        }
        let label = k.replace('_', " ");
        text(out, x + 40.0, y - 2.0, &label, 11.0, GREY, "start");
        x += 40.0 + text_w(&label) * 0.9 + 50.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn circuits() -> Vec<(String, Circuit)> {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("networks");
        let mut files: Vec<_> = std::fs::read_dir(&dir)
            .expect("networks/")
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
            .collect();
        files.sort();
        assert!(files.len() >= 5, "{files:?}");
        files
            .into_iter()
            .map(|p| {
                let c = crate::io::load_circuit(&p).expect("shipped circuit loads");
                (p.display().to_string(), c)
            })
            .collect()
    }

    /// Every shipped circuit: the schematic is well-formed SVG (parsed by
    /// roxmltree and by usvg), every element, pump, tap and node name
    /// appears as text, every element has its symbol group, no two nodes
    /// share a position (they are at least a
    /// column or a row apart), and drawing twice gives the same text.
    #[test]
    fn schematics_of_every_shipped_circuit() {
        for (file, c) in circuits() {
            let svg = schematic_svg(&c);
            assert_eq!(svg, schematic_svg(&c), "{file}: not deterministic");
            let doc = roxmltree::Document::parse(&svg).unwrap_or_else(|e| panic!("{file}: {e}"));
            let texts: Vec<&str> = doc
                .descendants()
                .filter(|n| n.has_tag_name("text"))
                .filter_map(|n| n.text())
                .collect();
            let names = c
                .elements
                .iter()
                .map(|e| &e.name)
                .chain(c.taps.iter().map(|t| &t.name))
                .chain(c.pumps.iter().map(|p| &p.name))
                .chain(c.nodes.iter().map(|n| &n.name));
            for name in names {
                assert!(texts.contains(&name.as_str()), "{file}: '{name}' not drawn");
            }
            // every element kind drawn by its own symbol group (the
            // newer kinds too: relief valve, cylinder, ...)
            for e in &c.elements {
                let class = format!("symbol {}", e.kind.name());
                assert!(
                    doc.descendants()
                        .any(|n| n.has_tag_name("g") && n.attribute("class") == Some(&class)),
                    "{file}: no '{class}' group"
                );
            }
            resvg::usvg::Tree::from_str(&svg, &resvg::usvg::Options::default())
                .unwrap_or_else(|e| panic!("{file}: {e}"));
            let lay = schematic_layout(&c);
            for (i, a) in lay.nodes.iter().enumerate() {
                assert!(a.0 > 0.0 && a.0 < lay.size.0 && a.1 > 0.0 && a.1 < lay.size.1);
                for b in &lay.nodes[i + 1..] {
                    let d = (a.0 - b.0).abs().max((a.1 - b.1).abs());
                    assert!(d >= COL_MIN.min(ROW_H), "{file}: nodes overlap at {a:?}");
                }
            }
        }
    }

    /// A branched circuit with a loop and a name that needs escaping: the
    /// trunk is the longest chain (one row), the branch opens a row below,
    /// the loop's element is drawn through a lane, and the text is escaped.
    #[test]
    fn trunk_branch_loop_and_escaping() {
        use crate::elements::{Element, ElementKind};
        let mut c = circuits().remove(0).1;
        let names = ["a", "b", "c", "d", "e"];
        c.nodes = names
            .iter()
            .map(|n| crate::circuit::Node {
                name: n.to_string(),
            })
            .collect();
        let tube = c
            .elements
            .iter()
            .find(|e| e.kind.name() == "tube")
            .expect("a tube in the demo")
            .kind
            .clone();
        let series = |name: &str, kind: &ElementKind, a: usize, b: usize| Element {
            name: name.into(),
            kind: kind.clone(),
            connection: Connection::Series { a, b },
        };
        c.elements = vec![
            series("t1", &tube, 0, 1),
            series("t2", &tube, 1, 2),
            series("t3", &tube, 2, 3),
            series("br", &tube, 1, 4),
            series("r<1>", &tube, 3, 2),
        ];
        c.pumps.truncate(1);
        c.pumps[0].node = 0;
        c.taps = vec![crate::circuit::Tap {
            name: "tap & b".into(),
            location: TapLocation::Node(1),
        }];
        c.title = Some("A <test> & loop".into());
        let lay = schematic_layout(&c);
        let y = |n: usize| lay.nodes[n].1;
        let x = |n: usize| lay.nodes[n].0;
        assert!(
            y(0) == y(1) && y(1) == y(2) && y(2) == y(3),
            "trunk a-b-c-d in one row"
        );
        assert!(y(4) > y(1), "branch e below");
        assert!(x(0) < x(1) && x(1) < x(2) && x(2) < x(3) && x(4) == x(2));
        let svg = schematic_svg(&c);
        assert!(svg.contains("A &lt;test&gt; &amp; loop"));
        assert!(svg.contains(">r&lt;1&gt;<") && svg.contains(">tap &amp; b<"));
        let doc = roxmltree::Document::parse(&svg).unwrap();
        // five polylines for the series elements (the loop one has 4+ points)
        let lines: Vec<_> = doc
            .descendants()
            .filter(|n| n.has_tag_name("polyline"))
            .collect();
        assert!(lines.iter().any(|n| {
            n.attribute("points")
                .is_some_and(|p| p.split(' ').count() >= 4)
        }));
    }
}
