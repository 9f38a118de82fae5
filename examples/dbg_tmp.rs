fn main() {
    let circuit = ripline::io::parse_circuit(ripline::demo::DEMO_CIRCUIT, "demo").unwrap();
    let plan = ripline::network::Plan::compile(&circuit).unwrap();
    let mut ws = plan.workspace();
    let mut acc = 0.0;
    for i in 0..2000 {
        let f = 1.0 + i as f64 * 2.5;
        acc += plan
            .solve(f, &[(0, ripline::C64::new(1e-5, 0.0))], &mut ws)
            .unwrap()
            .node_pressures[0]
            .re;
    }
    println!("{acc}");
}
