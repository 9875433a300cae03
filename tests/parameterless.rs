//! A metric without parameters still gets a generic struct and a constructor.

geokern::metric! {
    /// Flat plane in polar coordinates.
    pub struct Polar {
        coords: [r, phi],
        g[r, r] = 1;
        g[phi, phi] = r.powi(2);
    }
}

#[test]
fn polar_plane() {
    let p = <Polar>::new();
    let gam = p.christoffel(&[2.0, 0.3]);
    // Γ^r_φφ = −r, Γ^φ_rφ = 1/r (flat plane in polar coordinates; common practice).
    assert_eq!(gam[0][1][1], -2.0);
    assert_eq!(gam[1][0][1], 0.5);
    assert_eq!(<Polar>::CONSERVED, ["p_phi"]);
}
