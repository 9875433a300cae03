geokern::metric! {
    pub struct Degenerate {
        coords: [t, x, y],
        g[t, t] = -1.0;
        g[x, x] = 1.0;
        g[x, y] = 1.0;
        g[y, y] = 1.0;
    }
}

fn main() {}
