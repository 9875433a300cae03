geokern::metric! {
    pub struct Steps {
        coords: [t, x],
        g[t, t] = -1.0;
        g[x, x] = x.floor();
    }
}

fn main() {}
