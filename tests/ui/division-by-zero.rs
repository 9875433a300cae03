geokern::metric! {
    pub struct Flat {
        coords: [t, x],
        g[t, t] = -1.0;
        g[x, x] = 1.0 / (x - x);
    }
}

fn main() {}
