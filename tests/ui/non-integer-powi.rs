geokern::metric! {
    pub struct Flat {
        coords: [t, x],
        g[t, t] = -1.0;
        g[x, x] = x.powi(2.5);
    }
}

fn main() {}
