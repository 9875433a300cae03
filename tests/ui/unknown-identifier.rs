geokern::metric! {
    pub struct Flat {
        coords: [t, x],
        g[t, t] = -1.0;
        g[x, x] = rr.powi(2);
    }
}

fn main() {}
