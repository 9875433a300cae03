geokern::metric! {
    pub struct Flat {
        coords: [t, x],
        g[t, t] = -1.0;
        g[x, 2] = 1.0;
    }
}

fn main() {}
