geokern::metric! {
    pub struct Broken {
        coords: [t, x],
        params: [k],
        g[t, t] = -1.0;
        g[x, x] = k * y;
    }
}

fn main() {
    // The struct still exists (as a stub), so this use adds no second error.
    let b = Broken::new(1.0);
    let _ = b.christoffel(&[0.0, 1.0]);
}
