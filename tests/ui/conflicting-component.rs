geokern::metric! {
    pub struct Tilted {
        coords: [t, x],
        g[t, t] = -1.0;
        g[t, x] = 0.5;
        g[x, t] = 0.25;
        g[x, x] = 1.0;
    }
}

fn main() {}
