// NRLMSISE-00 empirical model of the neutral atmosphere (Picone, Hedin, Drob & Aikin
// 2002, JGR 107(A12) 1468; the MSIS formulation of Hedin 1987, JGR 92(A5) 4649, and
// Hedin 1991, JGR 96(A2) 1159), written from the model's description and NRL's
// reference release; coefficients in `nrlmsise00_tables.rs`.
//
// Self-contained (arithmetic and `std` paths only, no `use`) so that a plugin runtime can
// include it verbatim; the expansions and the profiles are in `nrlmsise00_expansions.rs`
// and `nrlmsise00_profiles.rs`, included alongside.
//
// Internally the model works as published: number densities in cm⁻³, g/cm³, gravity in
// cm/s², the gas constant 831.4 in its units, angles with the model's own rounded
// constants (DGTR, DR, HR, SR below): these are part of the model, not π/180.

/// Degrees to radians, as the model rounds it.
const DGTR: f64 = 1.74533e-2;
/// Day of year to radians of the annual cycle (2π/365), as the model rounds it.
const DR: f64 = 1.72142e-2;
/// Hours to radians of the diurnal cycle, as the model rounds it.
const HR: f64 = 0.2618;
/// Seconds to radians of the diurnal cycle, as the model rounds it.
const SR: f64 = 7.2722e-5;
/// Gas constant in the model's units.
const RGAS: f64 = 831.4;
/// Atomic mass unit, g (the model's value).
const AMU_G: f64 = 1.66e-24;

/// Geomagnetic activity as the model takes it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Geomagnetic {
    /// The daily Ap index.
    Daily(f64),
    /// The storm-time history: daily Ap; 3-hourly ap now, 3, 6 and 9 h before; the mean
    /// of the eight 3-hourly values 12–33 h before, and of those 36–57 h before.
    History([f64; 7]),
}

/// Where and when the model is evaluated, and the Sun's and the field's activity.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MsisInput {
    /// Day of year, 1–366. The model uses the whole day (as its reference release does).
    pub day_of_year: f64,
    /// Universal time of day, s.
    pub ut_s: f64,
    /// Geodetic altitude, km.
    pub altitude_km: f64,
    /// Geodetic latitude, degrees.
    pub latitude_deg: f64,
    /// East longitude, degrees.
    pub longitude_deg: f64,
    /// Local apparent solar time, hours.
    pub local_solar_time_h: f64,
    /// F10.7 solar radio flux of the previous day, 10⁻²² W m⁻² Hz⁻¹ (sfu).
    pub f107: f64,
    /// 81-day centred mean of F10.7, sfu.
    pub f107a: f64,
    /// Geomagnetic activity.
    pub geomagnetic: Geomagnetic,
}

/// The model's answer at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MsisOutput {
    /// Number densities, m⁻³: He, O, N2, O2, Ar, H, N, anomalous O.
    pub number_density_m3: [f64; 8],
    /// Total mass density for drag, kg/m³, anomalous oxygen included.
    pub mass_density_kg_m3: f64,
    /// Exospheric temperature, K.
    pub exospheric_temperature_k: f64,
    /// Temperature at the altitude, K.
    pub temperature_k: f64,
}

/// Evaluates NRLMSISE-00 (the reference release's GTD7D: all species, mass density
/// with anomalous oxygen), all switches on.
pub fn nrlmsise00(input: &MsisInput) -> MsisOutput {
    let point = Point::new(input);
    let (n, tinf, tz) = if input.altitude_km >= ZN2[0] {
        let upper = thermosphere_for(&point, input.altitude_km, true);
        (upper.n, upper.tinf, upper.tz)
    } else {
        lower_atmosphere(&point, input.altitude_km)
    };
    let mass = AMU_G
        * (4.0 * n[0] + 16.0 * n[1] + 28.0 * n[2] + 32.0 * n[3] + 40.0 * n[4] + n[5]
            + 14.0 * n[6]
            + 16.0 * n[7]);
    let mut number_density_m3 = n;
    for d in number_density_m3.iter_mut() {
        *d *= 1e6;
    }
    MsisOutput {
        number_density_m3,
        mass_density_kg_m3: mass * 1e3,
        exospheric_temperature_k: tinf,
        temperature_k: tz,
    }
}

/// Mesosphere/stratosphere spline nodes (km) and troposphere nodes.
const ZN2: [f64; 4] = [72.5, 55.0, 45.0, 32.5];
const ZN3: [f64; 5] = [32.5, 20.0, 15.0, 10.0, 0.0];
/// Below this altitude the thermosphere routine computes N2 alone.
const ZMIX: f64 = 62.5;

/// Quantities of one evaluation point that every coefficient set shares.
struct Point {
    day: f64,
    lat: f64,
    df: f64,
    dfa: f64,
    f107a: f64,
    geomagnetic: Geomagnetic,
    /// Associated Legendre functions P(n, m) of sin(latitude): `plg[m][n]`.
    plg: [[f64; 8]; 4],
    /// cos, sin of one, two and three times the local-time angle.
    ctloc: f64,
    stloc: f64,
    c2tloc: f64,
    s2tloc: f64,
    c3tloc: f64,
    s3tloc: f64,
    clong: f64,
    slong: f64,
    /// The per-point angles of the expansions' cos(a − phase) terms: the annual and
    /// semiannual day angles, the local-time hour angle, the UT second angle, that plus
    /// twice the longitude, and the longitude.
    day1: Rot,
    day2: Rot,
    hour: Rot,
    second: Rot,
    second_and_2lon: Rot,
    longitude: Rot,
    /// Surface gravity (cm/s²) and effective Earth radius (km) at the latitude.
    gsurf: f64,
    re: f64,
}

impl Point {
    fn new(input: &MsisInput) -> Point {
        let c = (input.latitude_deg * DGTR).sin();
        let s = (input.latitude_deg * DGTR).cos();
        let (c2, s2) = (c * c, s * s);
        let c4 = c2 * c2;
        let mut plg = [[0.0; 8]; 4];
        plg[0][1] = c;
        plg[0][2] = 0.5 * (3.0 * c2 - 1.0);
        plg[0][3] = 0.5 * (5.0 * c * c2 - 3.0 * c);
        plg[0][4] = (35.0 * c4 - 30.0 * c2 + 3.0) / 8.0;
        plg[0][5] = (63.0 * c2 * c2 * c - 70.0 * c2 * c + 15.0 * c) / 8.0;
        plg[0][6] = (11.0 * c * plg[0][5] - 5.0 * plg[0][4]) / 6.0;
        plg[1][1] = s;
        plg[1][2] = 3.0 * c * s;
        plg[1][3] = 1.5 * (5.0 * c2 - 1.0) * s;
        plg[1][4] = 2.5 * (7.0 * c2 * c - 3.0 * c) * s;
        plg[1][5] = 1.875 * (21.0 * c4 - 14.0 * c2 + 1.0) * s;
        plg[1][6] = (11.0 * c * plg[1][5] - 6.0 * plg[1][4]) / 5.0;
        plg[2][2] = 3.0 * s2;
        plg[2][3] = 15.0 * s2 * c;
        plg[2][4] = 7.5 * (7.0 * c2 - 1.0) * s2;
        plg[2][5] = 3.0 * c * plg[2][4] - 2.0 * plg[2][3];
        plg[2][6] = (11.0 * c * plg[2][5] - 7.0 * plg[2][4]) / 4.0;
        plg[2][7] = (13.0 * c * plg[2][6] - 8.0 * plg[2][5]) / 5.0;
        plg[3][3] = 15.0 * s2 * s;
        plg[3][4] = 105.0 * s2 * s * c;
        plg[3][5] = (9.0 * c * plg[3][4] - 7.0 * plg[3][3]) / 2.0;
        plg[3][6] = (11.0 * c * plg[3][5] - 8.0 * plg[3][4]) / 3.0;
        let tloc = input.local_solar_time_h;
        let (stloc, ctloc) = (HR * tloc).sin_cos();
        let (s2tloc, c2tloc) = (2.0 * HR * tloc).sin_cos();
        let (s3tloc, c3tloc) = (3.0 * HR * tloc).sin_cos();
        let (slong, clong) = (DGTR * input.longitude_deg).sin_cos();
        // Gravity of the model's latitude formula (its GLATF).
        let c2lat = (2.0 * DGTR * input.latitude_deg).cos();
        let gsurf = 980.616 * (1.0 - 0.0026373 * c2lat);
        let re = 2.0 * gsurf / (3.085462e-6 + 2.27e-9 * c2lat) * 1e-5;
        let day = input.day_of_year.floor();
        Point {
            day1: Rot::of(DR * day),
            day2: Rot::of(2.0 * DR * day),
            hour: Rot { c: ctloc, s: stloc },
            second: Rot::of(SR * input.ut_s),
            second_and_2lon: Rot::of(SR * input.ut_s + 2.0 * DGTR * input.longitude_deg),
            longitude: Rot { c: clong, s: slong },
            day,
            lat: input.latitude_deg,
            df: input.f107 - input.f107a,
            dfa: input.f107a - 150.0,
            f107a: input.f107a,
            geomagnetic: input.geomagnetic,
            plg,
            ctloc,
            stloc,
            c2tloc,
            s2tloc,
            c3tloc,
            s3tloc,
            clong,
            slong,
            gsurf,
            re,
        }
    }

    /// Geopotential height difference between `zz` and `zl`, km.
    fn zeta(&self, zz: f64, zl: f64) -> f64 {
        (zz - zl) * (self.re + zl) / (self.re + zz)
    }

    /// Scale height, km, at `alt` km of mass `xm` amu and temperature `temp` K.
    fn scale_height(&self, alt: f64, xm: f64, temp: f64) -> f64 {
        let g = self.gsurf / (1.0 + alt / self.re).powi(2);
        RGAS * temp / (g * xm)
    }
}

/// The thermosphere temperature profile: Bates above `za`, below it 1/T a spline through
/// nodes whose top node joins the Bates profile (value and gradient) at `za`.
struct Thermal {
    tinf: f64,
    tlb: f64,
    s: f64,
    za: f64,
    /// The spline below `za`, built once per point (every species shares it).
    below: SplineProfile<5>,
}

/// Lower boundary of the Bates profile, km (PTM(6)).
fn zlb() -> f64 {
    PTM[5]
}

/// Lowest node of the thermosphere spline, km.
const ZN1_BOTTOM: f64 = 72.5;

impl Thermal {
    /// `tn1`: node temperatures at 110, 100, 90 and 72.5 km (K); `tg_bottom`: the
    /// gradient at 72.5 km (K/km).
    fn new(pt: &Point, tinf: f64, tlb: f64, s: f64, tn1: [f64; 4], tg_bottom: f64) -> Thermal {
        let za = PDL[1][15];
        let ta = tinf - (tinf - tlb) * (-s * pt.zeta(za, zlb())).exp();
        let dta = (tinf - ta) * s * ((pt.re + zlb()) / (pt.re + za)).powi(2);
        let zn1 = [za, 110.0, 100.0, 90.0, ZN1_BOTTOM];
        let nodes = [ta, tn1[0], tn1[1], tn1[2], tn1[3]];
        Thermal {
            tinf,
            tlb,
            s,
            za,
            below: SplineProfile::new(pt, &zn1, &nodes, [dta, tg_bottom]),
        }
    }

    /// Density (cm⁻³) at `alt` of a gas of mass `xm` amu with thermal-diffusion
    /// coefficient `alpha`, from its value `dlb` at the lower boundary; and the
    /// temperature there (its DENSU). `xm` 0 gives the temperature only.
    fn density(&self, pt: &Point, alt: f64, dlb: f64, xm: f64, alpha: f64) -> (f64, f64) {
        let zg2 = pt.zeta(alt.max(self.za), zlb());
        let tt = self.tinf - (self.tinf - self.tlb) * (-self.s * zg2).exp();
        let below = (alt < self.za).then(|| self.below.temperature(pt, alt.max(ZN1_BOTTOM)));
        let tz = below.map_or(tt, |(t, _)| t);
        if xm == 0.0 {
            return (tz, tz);
        }
        let glb = pt.gsurf / (1.0 + zlb() / pt.re).powi(2);
        let gamma = xm * glb / (self.s * RGAS * self.tinf);
        let mut expl = (self.s * gamma * zg2).min(50.0);
        if tt <= 0.0 {
            expl = 50.0;
        }
        let densa = dlb * (self.tlb / tt).powf(1.0 + alpha + gamma) * (-expl).exp();
        match below {
            None => (densa, tz),
            Some((_, x)) => {
                let factor = if tz <= 0.0 {
                    (-50.0f64).exp()
                } else {
                    self.below.hydrostatic(pt, x, xm)
                };
                (densa * (self.below.t1 / tz).powf(1.0 + alpha) * factor, tz)
            }
        }
    }

    /// Temperature at the bottom node (72.5 km), K.
    fn bottom_temperature(&self) -> f64 {
        self.below.tn[4]
    }
}

/// The thermosphere's answer at one altitude (its GTS7), cm⁻³.
struct Upper {
    /// He, O, N2, O2, Ar, H, N, anomalous O.
    n: [f64; 8],
    tinf: f64,
    tz: f64,
    /// Mixed N2 density at the altitude (for the lower atmosphere below 72.5 km).
    dm28: f64,
    thermal: Thermal,
    /// Magnetic terms of the last expansion (for the lower atmosphere).
    magnetic: Magnetic,
}

/// The thermosphere at `alt`: all species, or N2 alone (`all` false, below `ZMIX`).
fn thermosphere_for(pt: &Point, alt: f64, all: bool) -> Upper {
    let mut m = Magnetic::default();
    let za = PDL[1][15];
    // Exospheric temperature, gradient and lower-boundary temperature.
    let tinf = if alt > za {
        PTM[0] * PT[0] * (1.0 + globe7(&PT, pt, &mut m))
    } else {
        PTM[0] * PT[0]
    };
    let g0 = if alt > ZN1_BOTTOM {
        PTM[3] * PS[0] * (1.0 + globe7(&PS, pt, &mut m))
    } else {
        PTM[3] * PS[0]
    };
    let tlb = PTM[1] * (1.0 + globe7(&PD[3], pt, &mut m)) * PD[3][0];
    let s = g0 / (tinf - tlb);
    // Lower-thermosphere temperatures vary with the expansions only below 300 km, where
    // they matter for density.
    let base = [PTM[6] * PTL[0][0], PTM[2] * PTL[1][0], PTM[7] * PTL[2][0], PTM[4] * PTL[3][0]];
    let mut tn1 = base;
    let mut tg = PTM[8] * PMA[8][0];
    if alt < 300.0 {
        for (k, t) in tn1.iter_mut().enumerate() {
            *t = base[k] / (1.0 - glob7s(&PTL[k], pt, &m));
        }
        tg *= 1.0 + glob7s(&PMA[8], pt, &m);
    }
    let tg_bottom = tg * tn1[3] * tn1[3] / (base[3] * base[3]);
    let thermal = Thermal::new(pt, tinf, tlb, s, tn1, tg_bottom);
    let mut species = Species {
        pt,
        thermal: &thermal,
        alt,
        m,
        n: [0.0; 8],
        b28: 0.0,
        dm28: 0.0,
        zhm28: 0.0,
    };
    species.nitrogen_molecular();
    if all {
        species.all_others();
    }
    let (tz, _) = thermal.density(pt, alt, 1.0, 0.0, 0.0);
    Upper {
        n: species.n,
        tinf,
        tz,
        dm28: species.dm28,
        magnetic: species.m,
        thermal,
    }
}

/// Mass of the mixed atmosphere, amu (PDM(5,3)).
fn xmm() -> f64 {
    PDM[2][4]
}

/// Species densities of the thermosphere: diffusive profiles from the lower boundary,
/// blended with mixed profiles below the turbopause and corrected for chemistry.
struct Species<'a> {
    pt: &'a Point,
    thermal: &'a Thermal,
    alt: f64,
    m: Magnetic,
    n: [f64; 8],
    /// Mixed N2 density at the turbopause, the other species' reference.
    b28: f64,
    dm28: f64,
    zhm28: f64,
}

/// Thermal-diffusion coefficients, by slot of `Species::n`'s Fortran order
/// (He, O, N2, O2, Ar, mass, H, N, anomalous O).
const ALPHA: [f64; 9] = [-0.38, 0.0, 0.0, 0.0, 0.17, 0.0, -0.38, 0.0, 0.0];
/// Altitudes (km) above which a species is purely diffusive.
const ALTL: [f64; 8] = [200.0, 300.0, 160.0, 250.0, 240.0, 450.0, 320.0, 450.0];

/// A species of [`Species::mixing_species`]: its expansion set `PD[pd]`, PDM column `k`,
/// mass `xm` (amu), slot in `ALPHA`/`ALTL`, the extra factor of its ground mixing ratio,
/// and the PDL factors of its correction's scale height and height.
struct Mixing {
    pd: usize,
    k: usize,
    xm: f64,
    slot: usize,
    ratio: f64,
    h: f64,
    z: f64,
}

impl Species<'_> {
    fn expansion(&mut self, p: &[f64; 150]) -> f64 {
        globe7(p, self.pt, &mut self.m)
    }

    fn diffusive(&self, dlb: f64, xm: f64, alpha: f64) -> f64 {
        self.thermal.density(self.pt, self.alt, dlb, xm, alpha).0
    }

    /// Diffusive density at the altitude blended with the mixed profile from the
    /// turbopause height `zh` (km); returns (net density, mixed density at zh).
    fn mixed(&self, dd: f64, db: f64, zh: f64, xm: f64, alpha: f64) -> (f64, f64) {
        let (th, pt) = (self.thermal, self.pt);
        let b = th.density(pt, zh, db, xm - xmm(), alpha - 1.0).0;
        let dm = th.density(pt, self.alt, b, xmm(), 0.0).0;
        (dnet(dd, dm, self.zhm28, xmm(), xm), b)
    }

    fn nitrogen_molecular(&mut self) {
        let g28 = self.expansion(&PD[2]);
        let day = self.pt.day;
        let zhf = PDL[1][24]
            * (1.0
                + PDL[0][24] * (DGTR * self.pt.lat).sin() * (DR * (day - PT[13])).cos());
        let db28 = PDM[2][0] * g28.exp() * PD[2][0];
        let mut d = self.diffusive(db28, 28.0, ALPHA[2]);
        let zh28 = PDM[2][2] * zhf;
        self.zhm28 = PDM[2][3] * PDL[1][5];
        self.b28 = self
            .thermal
            .density(self.pt, zh28, db28, 28.0 - xmm(), ALPHA[2] - 1.0)
            .0;
        if self.alt <= ALTL[2] {
            self.dm28 = self
                .thermal
                .density(self.pt, self.alt, self.b28, xmm(), ALPHA[2])
                .0;
            d = dnet(d, self.dm28, self.zhm28, xmm(), 28.0);
        }
        self.n[2] = d;
    }

    /// A species that mixes below the turbopause, corrected there to its ground mixing
    /// ratio relative to N2.
    fn mixing_species(&mut self, s: Mixing) -> f64 {
        let g = self.expansion(&PD[s.pd]);
        let db = PDM[s.k][0] * g.exp() * PD[s.pd][0];
        let mut d = self.diffusive(db, s.xm, ALPHA[s.slot]);
        if self.alt <= ALTL[s.slot] {
            let (net, b) = self.mixed(d, db, PDM[s.k][2], s.xm, ALPHA[s.slot]);
            let rl = (self.b28 * PDM[s.k][1] * s.ratio / b).ln();
            d = net * ccor(self.alt, rl, PDM[s.k][5] * s.h, PDM[s.k][4] * s.z);
        }
        d
    }

    /// The chemistry correction of PDM column `k` with PDL factors (r, h, z), where the
    /// species of slot `slot` mixes.
    fn chemistry(&self, k: usize, slot: usize, (r, h, z): (f64, f64, f64)) -> f64 {
        if self.alt <= ALTL[slot] {
            ccor(self.alt, PDM[k][3] * r, PDM[k][7] * h, PDM[k][6] * z)
        } else {
            1.0
        }
    }

    fn all_others(&mut self) {
        let alt = self.alt;
        let f107a = self.pt.f107a;
        let mix = |pd, k, xm, slot, ratio, (h, z)| Mixing {
            pd,
            k,
            xm,
            slot,
            ratio,
            h,
            z,
        };
        self.n[0] = self.mixing_species(mix(0, 0, 4.0, 0, 1.0, (PDL[1][1], PDL[1][0])));
        // O: a departure from diffusive equilibrium near 150 km with F10.7, and chemistry.
        let g16 = self.expansion(&PD[1]);
        let db16 = PDM[1][0] * g16.exp() * PD[1][0];
        let mut d = self.diffusive(db16, 16.0, ALPHA[1]);
        if alt <= ALTL[1] {
            let (net, _) = self.mixed(d, db16, PDM[1][2], 16.0, ALPHA[1]);
            let rl = PDM[1][1] * PDL[1][16] * (1.0 + PDL[0][23] * (f107a - 150.0));
            d = net
                * ccor2(alt, rl, PDM[1][5] * PDL[1][3], PDM[1][4] * PDL[1][2], PDM[1][5] * PDL[1][4]);
            d *= self.chemistry(1, 1, (PDL[1][14], PDL[1][13], PDL[1][12]));
        }
        self.n[1] = d;
        // O2, with a general departure from diffusive equilibrium above the lower boundary.
        let d = self.mixing_species(mix(4, 3, 32.0, 3, 1.0, (PDL[1][7], PDL[1][6])));
        let rc32 = PDM[3][3] * PDL[1][23] * (1.0 + PDL[0][23] * (f107a - 150.0));
        self.n[3] =
            d * ccor2(alt, rc32, PDM[3][7] * PDL[1][22], PDM[3][6] * PDL[1][21], PDM[3][7] * PDL[0][22]);
        self.n[4] = self.mixing_species(mix(5, 4, 40.0, 4, 1.0, (PDL[1][9], PDL[1][8])));
        // H and N, with chemistry.
        let d = self.mixing_species(mix(6, 5, 1.0, 6, PDL[1][17].abs(), (PDL[1][11], PDL[1][10])));
        self.n[5] = d * self.chemistry(5, 6, (PDL[1][20], PDL[1][19], PDL[1][18]));
        let d = self.mixing_species(mix(7, 6, 14.0, 7, PDL[0][2].abs(), (PDL[0][1], PDL[0][0])));
        self.n[6] = d * self.chemistry(6, 7, (PDL[0][5], PDL[0][4], PDL[0][3]));
        // Anomalous O: a hot component, isothermal at `tho`, decaying below `zmho`.
        let g16h = self.expansion(&PD[8]);
        let db16h = PDM[7][0] * g16h.exp() * PD[8][0];
        let tho = PDM[7][9] * PDL[0][6];
        let below = &self.thermal.below;
        let tn1 = [below.tn[1], below.tn[2], below.tn[3], below.tn[4]];
        let hot = Thermal::new(self.pt, tho, tho, self.thermal.s, tn1, below.tg[1]);
        let dd = hot.density(self.pt, alt, db16h, 16.0, ALPHA[8]).0;
        let (zsht, zmho) = (PDM[7][5], PDM[7][4]);
        let zsho = self.pt.scale_height(zmho, 16.0, tho);
        self.n[7] = dd * (-zsht / zsho * ((-(alt - zmho) / zsht).exp() - 1.0)).exp();
    }
}

/// Below 72.5 km (its GTD7 lower branch): temperatures from splines through nodes in the
/// mesosphere and troposphere, densities hydrostatic from the thermosphere's values at
/// 72.5 km, fully mixed below 62.5 km. Returns (densities cm⁻³, T∞, T).
fn lower_atmosphere(pt: &Point, alt: f64) -> ([f64; 8], f64, f64) {
    let upper = thermosphere_for(pt, ZN2[0], alt >= ZMIX);
    let m = upper.magnetic;
    let th = &upper.thermal;
    let mut tn2 = [0.0; 4];
    tn2[0] = th.bottom_temperature();
    tn2[1] = PMA[0][0] * PAVGM[0] / (1.0 - glob7s(&PMA[0], pt, &m));
    tn2[2] = PMA[1][0] * PAVGM[1] / (1.0 - glob7s(&PMA[1], pt, &m));
    tn2[3] = PMA[2][0] * PAVGM[2] / (1.0 - glob7s(&PMA[2], pt, &m));
    let tgn2 = [
        th.below.tg[1],
        PAVGM[8] * PMA[9][0] * (1.0 + glob7s(&PMA[9], pt, &m)) * tn2[3] * tn2[3]
            / (PMA[2][0] * PAVGM[2]).powi(2),
    ];
    let mut tn3 = [0.0; 5];
    tn3[0] = tn2[3];
    let mut tgn3 = [tgn2[1], 0.0];
    if alt < ZN3[0] {
        for k in 1..5 {
            tn3[k] = PMA[k + 2][0] * PAVGM[k + 2] / (1.0 - glob7s(&PMA[k + 2], pt, &m));
        }
        tgn3[1] = PMA[7][0] * PAVGM[7] * (1.0 + glob7s(&PMA[7], pt, &m)) * tn3[4] * tn3[4]
            / (PMA[6][0] * PAVGM[6]).powi(2);
    }
    // Linear transition to full mixing below 72.5 km.
    let dmc = if alt > ZMIX {
        1.0 - (ZN2[0] - alt) / (ZN2[0] - ZMIX)
    } else {
        0.0
    };
    let ds = upper.n;
    let dz28 = ds[2];
    let (n2_mixed, tz) = densm(pt, alt, upper.dm28, xmm(), (&tn2, tgn2), (&tn3, tgn3));
    let dmr = ds[2] / upper.dm28 - 1.0;
    let mut n = [0.0; 8];
    n[2] = n2_mixed * (1.0 + dmr * dmc);
    // He, O2, Ar follow N2 at the model's ground mixing ratios.
    for (slot, col) in [(0usize, 0usize), (3, 3), (4, 4)] {
        let dmr = ds[slot] / (dz28 * PDM[col][1]) - 1.0;
        n[slot] = n[2] * PDM[col][1] * (1.0 + dmr * dmc);
    }
    (n, upper.tinf, tz)
}
