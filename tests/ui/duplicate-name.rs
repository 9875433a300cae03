geokern::metric! {
    pub struct Flat {
        coords: [t, x],
        params: [x],
        g[t, t] = -1.0;
        g[x, x] = 1.0;
    }
}

fn main() {}
