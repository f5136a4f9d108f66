// NRLMSISE-00: the expansions in spherical harmonics, season, local time, universal
// time and longitude of each coefficient set (the reference release's GLOBE7 and
// GLOB7S). Part of the model `nrlmsise00_model.rs`; included alongside it, free of `use`.

/// The magnetic-activity terms the last upper-atmosphere expansion computed, which the
/// lower-atmosphere expansions reuse (the reference release keeps them in a common
/// block; the order of calls below reproduces what it holds).
#[derive(Clone, Copy, Default)]
struct Magnetic {
    /// Daily-Ap function.
    apdf: f64,
    /// Storm-time function of the 3-hourly history.
    apt: f64,
}

/// An angle as its cosine and sine, so that cos(a − b) of a per-point angle a and a
/// per-coefficient-set phase b costs two products instead of a cosine.
#[derive(Clone, Copy, Debug, Default)]
struct Rot {
    c: f64,
    s: f64,
}

impl Rot {
    fn of(angle: f64) -> Rot {
        let (s, c) = angle.sin_cos();
        Rot { c, s }
    }

    /// cos(self − b).
    fn cos_minus(self, b: Rot) -> f64 {
        self.c * b.c + self.s * b.s
    }
}

/// The phases of an upper-atmosphere coefficient set, as the model scales them.
#[derive(Clone, Copy, Debug, Default)]
struct UpperPhases {
    d31: Rot,
    d17: Rot,
    d13: Rot,
    d38: Rot,
    h131: Rot,
    h124: Rot,
    s71: Rot,
    s79: Rot,
    s58: Rot,
    s75: Rot,
    l97: Rot,
    l136: Rot,
    l63: Rot,
    l118: Rot,
}

impl UpperPhases {
    fn of(p: &[f64; 150]) -> Self {
        UpperPhases {
            d31: Rot::of(DR * p[31]),
            d17: Rot::of(2.0 * DR * p[17]),
            d13: Rot::of(DR * p[13]),
            d38: Rot::of(2.0 * DR * p[38]),
            h131: Rot::of(HR * p[131]),
            h124: Rot::of(HR * p[124]),
            s71: Rot::of(SR * p[71]),
            s79: Rot::of(SR * p[79]),
            s58: Rot::of(SR * p[58]),
            s75: Rot::of(SR * p[75]),
            l97: Rot::of(DGTR * p[97]),
            l136: Rot::of(DGTR * p[136]),
            l63: Rot::of(DGTR * p[63]),
            l118: Rot::of(DGTR * p[118]),
        }
    }
}

/// The phases of a lower-atmosphere coefficient set.
#[derive(Clone, Copy, Debug, Default)]
struct LowerPhases {
    d31: Rot,
    d17: Rot,
    d13: Rot,
    d38: Rot,
    d81: Rot,
    d86: Rot,
    d84: Rot,
    d88: Rot,
}

impl LowerPhases {
    fn of(p: &[f64; 100]) -> Self {
        LowerPhases {
            d31: Rot::of(DR * p[31]),
            d17: Rot::of(2.0 * DR * p[17]),
            d13: Rot::of(DR * p[13]),
            d38: Rot::of(2.0 * DR * p[38]),
            d81: Rot::of(DR * p[81]),
            d86: Rot::of(2.0 * DR * p[86]),
            d84: Rot::of(DR * p[84]),
            d88: Rot::of(2.0 * DR * p[88]),
        }
    }
}

/// The phases of each coefficient table, computed once per process; a set is found by
/// its address among the tables (any other set gets its phases computed on the spot).
struct PhaseTables {
    upper: Vec<(usize, UpperPhases)>,
    lower: Vec<(usize, LowerPhases)>,
}

fn phase_tables() -> &'static PhaseTables {
    static TABLES: std::sync::OnceLock<PhaseTables> = std::sync::OnceLock::new();
    TABLES.get_or_init(|| {
        let mut upper: Vec<&'static [f64; 150]> = vec![&PT, &PS];
        upper.extend(PD.iter());
        let mut lower: Vec<&'static [f64; 100]> = PTL.iter().collect();
        lower.extend(PMA.iter());
        PhaseTables {
            upper: upper
                .into_iter()
                .map(|p| (p.as_ptr() as usize, UpperPhases::of(p)))
                .collect(),
            lower: lower
                .into_iter()
                .map(|p| (p.as_ptr() as usize, LowerPhases::of(p)))
                .collect(),
        }
    })
}

fn upper_phases(p: &[f64; 150]) -> UpperPhases {
    let key = p.as_ptr() as usize;
    phase_tables()
        .upper
        .iter()
        .find(|(k, _)| *k == key)
        .map_or_else(|| UpperPhases::of(p), |(_, ph)| *ph)
}

fn lower_phases(p: &[f64; 100]) -> LowerPhases {
    let key = p.as_ptr() as usize;
    phase_tables()
        .lower
        .iter()
        .find(|(k, _)| *k == key)
        .map_or_else(|| LowerPhases::of(p), |(_, ph)| *ph)
}

/// The storm-time function's g0 of one ap value (its G0).
fn g0(a: f64, p: &[f64; 150], p25: f64) -> f64 {
    a - 4.0 + (p[25] - 1.0) * (a - 4.0 + ((-p25.abs() * (a - 4.0)).exp() - 1.0) / p25.abs())
}

/// Weighted sum of the ap history (its SG0).
fn sg0(ex: f64, p: &[f64; 150], p25: f64, ap: &[f64; 7]) -> f64 {
    let sumex = 1.0 + (1.0 - ex.powi(19)) / (1.0 - ex) * ex.sqrt();
    (g0(ap[1], p, p25)
        + (g0(ap[2], p, p25) * ex
            + g0(ap[3], p, p25) * ex * ex
            + g0(ap[4], p, p25) * ex.powi(3)
            + (g0(ap[5], p, p25) * ex.powi(4) + g0(ap[6], p, p25) * ex.powi(12))
                * (1.0 - ex.powi(8))
                / (1.0 - ex)))
        / sumex
}

/// The upper-atmosphere expansion G(L) of one coefficient set (its GLOBE7): a sum of
/// solar-flux, seasonal, tidal, magnetic and longitudinal terms.
fn globe7(p: &[f64; 150], pt: &Point, m: &mut Magnetic) -> f64 {
    let plg = &pt.plg;
    let (df, dfa) = (pt.df, pt.dfa);
    let ph = upper_phases(p);
    let cd32 = pt.day1.cos_minus(ph.d31);
    let cd18 = pt.day2.cos_minus(ph.d17);
    let cd14 = pt.day1.cos_minus(ph.d13);
    let cd39 = pt.day2.cos_minus(ph.d38);
    let mut t = [0.0; 14];
    // F10.7
    t[0] = p[19] * df * (1.0 + p[59] * dfa) + p[20] * df * df + p[21] * dfa + p[29] * dfa * dfa;
    let f1 = 1.0 + (p[47] * dfa + p[19] * df + p[20] * df * df);
    let f2 = 1.0 + (p[49] * dfa + p[19] * df + p[20] * df * df);
    // Time independent; symmetrical and asymmetrical annual and semiannual.
    t[1] = (p[1] * plg[0][2] + p[2] * plg[0][4] + p[22] * plg[0][6])
        + p[14] * plg[0][2] * dfa
        + p[26] * plg[0][1];
    t[2] = p[18] * cd32;
    t[3] = (p[15] + p[16] * plg[0][2]) * cd18;
    t[4] = f1 * (p[9] * plg[0][1] + p[10] * plg[0][3]) * cd14;
    t[5] = p[37] * plg[0][1] * cd39;
    // Diurnal, semidiurnal, terdiurnal.
    let t71 = p[11] * plg[1][2] * cd14;
    let t72 = p[12] * plg[1][2] * cd14;
    t[6] = f2
        * ((p[3] * plg[1][1] + p[4] * plg[1][3] + p[27] * plg[1][5] + t71) * pt.ctloc
            + (p[6] * plg[1][1] + p[7] * plg[1][3] + p[28] * plg[1][5] + t72) * pt.stloc);
    let t81 = (p[23] * plg[2][3] + p[35] * plg[2][5]) * cd14;
    let t82 = (p[33] * plg[2][3] + p[36] * plg[2][5]) * cd14;
    t[7] = f2
        * ((p[5] * plg[2][2] + p[41] * plg[2][4] + t81) * pt.c2tloc
            + (p[8] * plg[2][2] + p[42] * plg[2][4] + t82) * pt.s2tloc);
    t[13] = f2
        * ((p[39] * plg[3][3] + (p[93] * plg[3][4] + p[46] * plg[3][6]) * cd14) * pt.s3tloc
            + (p[40] * plg[3][3] + (p[94] * plg[3][4] + p[48] * plg[3][6]) * cd14) * pt.c3tloc);
    (t[8], t[12]) = magnetic_terms(p, pt, &ph, cd14, m);
    (t[10], t[11]) = longitude_terms(p, pt, &ph, cd14);
    let mut g = p[30];
    for term in t {
        g += term;
    }
    g
}

/// The magnetic-activity terms of [`globe7`]: the daily-Ap or storm-time term, and its
/// UT/longitude part; records the activity function in `m` for the lower atmosphere.
fn magnetic_terms(
    p: &[f64; 150],
    pt: &Point,
    ph: &UpperPhases,
    cd14: f64,
    m: &mut Magnetic,
) -> (f64, f64) {
    let plg = &pt.plg;
    let (mut t8, mut t12) = (0.0, 0.0);
    // Magnetic activity.
    let storm = match pt.geomagnetic {
        Geomagnetic::History(ap) => {
            if p[51] != 0.0 {
                let ex = (-10800.0 * p[51].abs() / (1.0 + p[138] * (45.0 - pt.lat.abs()))).exp();
                let ex = ex.min(0.99999);
                let p25 = if p[24] < 1e-4 { 1e-4 } else { p[24] };
                m.apt = sg0(ex, p, p25, &ap);
                t8 = m.apt
                    * (p[50]
                        + p[96] * plg[0][2]
                        + p[54] * plg[0][4]
                        + (p[125] * plg[0][1] + p[126] * plg[0][3] + p[127] * plg[0][5]) * cd14
                        + (p[128] * plg[1][1] + p[129] * plg[1][3] + p[130] * plg[1][5])
                            * pt.hour.cos_minus(ph.h131));
            }
            true
        }
        Geomagnetic::Daily(ap) => {
            let apd = ap - 4.0;
            let p44 = if p[43] < 0.0 { 1e-5 } else { p[43] };
            m.apdf = apd + (p[44] - 1.0) * (apd + ((-p44 * apd).exp() - 1.0) / p44);
            t8 = m.apdf
                * (p[32]
                    + p[45] * plg[0][2]
                    + p[34] * plg[0][4]
                    + (p[100] * plg[0][1] + p[101] * plg[0][3] + p[102] * plg[0][5]) * cd14
                    + (p[121] * plg[1][1] + p[122] * plg[1][3] + p[123] * plg[1][5])
                        * pt.hour.cos_minus(ph.h124));
            false
        }
    };
    // UT/longitude magnetic activity.
    if storm {
        if p[51] != 0.0 {
            t12 = m.apt
                * (1.0 + p[132] * plg[0][1])
                * ((p[52] * plg[1][2] + p[98] * plg[1][4] + p[67] * plg[1][6])
                    * pt.longitude.cos_minus(ph.l97))
                + m.apt
                    * (p[133] * plg[1][1] + p[134] * plg[1][3] + p[135] * plg[1][5])
                    * cd14
                    * pt.longitude.cos_minus(ph.l136)
                + m.apt
                    * (p[55] * plg[0][1] + p[56] * plg[0][3] + p[57] * plg[0][5])
                    * pt.second.cos_minus(ph.s58);
        }
    } else {
        t12 = m.apdf
            * (1.0 + p[120] * plg[0][1])
            * ((p[60] * plg[1][2] + p[61] * plg[1][4] + p[62] * plg[1][6])
                * pt.longitude.cos_minus(ph.l63))
            + m.apdf
                * (p[115] * plg[1][1] + p[116] * plg[1][3] + p[117] * plg[1][5])
                * cd14
                * pt.longitude.cos_minus(ph.l118)
            + m.apdf
                * (p[83] * plg[0][1] + p[84] * plg[0][3] + p[85] * plg[0][5])
                * pt.second.cos_minus(ph.s75);
    }
    (t8, t12)
}

/// The longitudinal and the UT (and mixed UT/longitude) terms of [`globe7`].
fn longitude_terms(p: &[f64; 150], pt: &Point, ph: &UpperPhases, cd14: f64) -> (f64, f64) {
    let plg = &pt.plg;
    let dfa = pt.dfa;
    // Longitudinal.
    let t10 = (1.0 + p[80] * dfa)
        * ((p[64] * plg[1][2]
            + p[65] * plg[1][4]
            + p[66] * plg[1][6]
            + p[103] * plg[1][1]
            + p[104] * plg[1][3]
            + p[105] * plg[1][5]
            + (p[109] * plg[1][1] + p[110] * plg[1][3] + p[111] * plg[1][5]) * cd14)
            * pt.clong
            + (p[90] * plg[1][2]
                + p[91] * plg[1][4]
                + p[92] * plg[1][6]
                + p[106] * plg[1][1]
                + p[107] * plg[1][3]
                + p[108] * plg[1][5]
                + (p[112] * plg[1][1] + p[113] * plg[1][3] + p[114] * plg[1][5]) * cd14)
                * pt.slong);
    // UT and mixed UT/longitude.
    let mut t11 = (1.0 + p[95] * plg[0][1])
        * (1.0 + p[81] * dfa)
        * (1.0 + p[119] * plg[0][1] * cd14)
        * ((p[68] * plg[0][1] + p[69] * plg[0][3] + p[70] * plg[0][5])
            * pt.second.cos_minus(ph.s71));
    t11 += (p[76] * plg[2][3] + p[77] * plg[2][5] + p[78] * plg[2][7])
        * pt.second_and_2lon.cos_minus(ph.s79)
        * (1.0 + p[137] * dfa);
    (t10, t11)
}

/// The lower-atmosphere expansion of one coefficient set (its GLOB7S), with the
/// magnetic terms of the last upper-atmosphere expansion.
fn glob7s(p: &[f64; 100], pt: &Point, m: &Magnetic) -> f64 {
    let plg = &pt.plg;
    let ph = lower_phases(p);
    let cd32 = pt.day1.cos_minus(ph.d31);
    let cd18 = pt.day2.cos_minus(ph.d17);
    let cd14 = pt.day1.cos_minus(ph.d13);
    let cd39 = pt.day2.cos_minus(ph.d38);
    let mut t = [0.0; 14];
    t[0] = p[21] * pt.dfa;
    t[1] = p[1] * plg[0][2]
        + p[2] * plg[0][4]
        + p[22] * plg[0][6]
        + p[26] * plg[0][1]
        + p[14] * plg[0][3]
        + p[59] * plg[0][5];
    t[2] = (p[18] + p[47] * plg[0][2] + p[29] * plg[0][4]) * cd32;
    t[3] = (p[15] + p[16] * plg[0][2] + p[30] * plg[0][4]) * cd18;
    t[4] = (p[9] * plg[0][1] + p[10] * plg[0][3] + p[20] * plg[0][5]) * cd14;
    t[5] = p[37] * plg[0][1] * cd39;
    let t71 = p[11] * plg[1][2] * cd14;
    let t72 = p[12] * plg[1][2] * cd14;
    t[6] = (p[3] * plg[1][1] + p[4] * plg[1][3] + t71) * pt.ctloc
        + (p[6] * plg[1][1] + p[7] * plg[1][3] + t72) * pt.stloc;
    let t81 = (p[23] * plg[2][3] + p[35] * plg[2][5]) * cd14;
    let t82 = (p[33] * plg[2][3] + p[36] * plg[2][5]) * cd14;
    t[7] = (p[5] * plg[2][2] + p[41] * plg[2][4] + t81) * pt.c2tloc
        + (p[8] * plg[2][2] + p[42] * plg[2][4] + t82) * pt.s2tloc;
    t[13] = p[39] * plg[3][3] * pt.s3tloc + p[40] * plg[3][3] * pt.c3tloc;
    t[8] = match pt.geomagnetic {
        Geomagnetic::Daily(_) => m.apdf * (p[32] + p[45] * plg[0][2]),
        Geomagnetic::History(_) => p[50] * m.apt + p[96] * plg[0][2] * m.apt,
    };
    t[10] = (1.0
        + plg[0][1]
            * (p[80] * pt.day1.cos_minus(ph.d81) + p[85] * pt.day2.cos_minus(ph.d86))
        + p[83] * pt.day1.cos_minus(ph.d84)
        + p[87] * pt.day2.cos_minus(ph.d88))
        * ((p[64] * plg[1][2]
            + p[65] * plg[1][4]
            + p[66] * plg[1][6]
            + p[74] * plg[1][1]
            + p[75] * plg[1][3]
            + p[76] * plg[1][5])
            * pt.clong
            + (p[90] * plg[1][2]
                + p[91] * plg[1][4]
                + p[92] * plg[1][6]
                + p[77] * plg[1][1]
                + p[78] * plg[1][3]
                + p[79] * plg[1][5])
                * pt.slong);
    let mut g = 0.0;
    for term in t {
        g += term;
    }
    g
}
