"""Topocentric azimuth, elevation and range of LEO and GEO objects from three sites, by
astropy: sites from geodetic WGS-84 coordinates (`EarthLocation.from_geodetic`, ERFA
gd2gc), object positions given in ITRS, the topocentric ITRS vector transformed to AltAz
(astropy's direct ITRS -> observed transform: geometric, no refraction, no aberration).
Positions are Earth-fixed, so no Earth-orientation data enter. Object positions are drawn
from a fixed seed: 3 sites x (8 LEO + 4 GEO).

And topocentric right ascension and declination, geometric (no light time, no
aberration), in GCRS axes: the site's GCRS position at 2021-04-15T06:00 UTC by astropy
(`EarthLocation.get_gcrs_posvel`: IAU 2006/2000A with the IERS data astropy ships),
objects given in GCRS, RA/Dec of the difference vector.
Writes ROOT/tests/data/reference/tracking_geometry_astropy.json."""
import json
import sys
from pathlib import Path

import warnings

import astropy
import astropy.units as u
import erfa
import numpy as np
from astropy.coordinates import ITRS, AltAz, CartesianRepresentation, EarthLocation
from astropy.time import Time
from astropy.utils import iers

iers.conf.auto_download = False
# 2031 is past ERFA's leap-second table ("dubious year"): harmless for Earth-fixed geometry.
warnings.simplefilter("ignore", erfa.ErfaWarning)

# Latitude, longitude (deg), height (km) of three invented sites.
SITES = [(40.43, -3.71, 0.655), (-31.87, 115.96, 0.024), (69.29, 16.03, 0.380)]
EPOCH = "2031-05-04T00:00:00"
# Inside the IERS data astropy ships (and arcwise's shipped table).
RADEC_EPOCH = "2021-04-15T06:00:00"


def objects(rng, site_itrs):
    """LEO and GEO positions (km, ITRS) around and above a site."""
    out = []
    for k in range(12):
        r = rng.uniform(6700.0, 7400.0) if k < 8 else 42164.0
        # Directions near the site's zenith direction, so most are above the horizon.
        d = site_itrs / np.linalg.norm(site_itrs) + rng.normal(0.0, 0.5 if k < 8 else 0.3, 3)
        out.append(r * d / np.linalg.norm(d))
    return out


def main(root: Path):
    rng = np.random.default_rng(17)
    t = Time(EPOCH, scale="utc")
    cases = []
    sites = []
    for lat, lon, h in SITES:
        loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, h * u.km, ellipsoid="WGS84")
        site = np.array([loc.x.to_value(u.km), loc.y.to_value(u.km), loc.z.to_value(u.km)])
        sites.append({"lat_deg": lat, "lon_deg": lon, "h_km": h, "itrf_km": site.tolist()})
        for r in objects(rng, site):
            topo = CartesianRepresentation((r - site) * u.km)
            aa = ITRS(topo, obstime=t, location=loc).transform_to(AltAz(obstime=t, location=loc))
            cases.append({
                "site": len(sites) - 1,
                "r_itrf_km": r.tolist(),
                "az_deg": aa.az.to_value(u.deg),
                "el_deg": aa.alt.to_value(u.deg),
                "range_km": aa.distance.to_value(u.km),
            })
    t2 = Time(RADEC_EPOCH, scale="utc")
    radec = []
    for i, (lat, lon, h) in enumerate(SITES):
        loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, h * u.km, ellipsoid="WGS84")
        pos, _ = loc.get_gcrs_posvel(t2)
        site = pos.xyz.to_value(u.km)
        for r in objects(rng, site):
            rho = r - site
            radec.append({
                "site": i,
                "r_gcrf_km": r.tolist(),
                "ra_deg": float(np.degrees(np.arctan2(rho[1], rho[0])) % 360.0),
                "dec_deg": float(np.degrees(np.arcsin(rho[2] / np.linalg.norm(rho)))),
            })
    out = {"source": f"astropy {astropy.__version__}: EarthLocation.from_geodetic (WGS84), ITRS -> AltAz (topocentric, geometric); get_gcrs_posvel for RA/Dec",
           "radec_epoch_utc": RADEC_EPOCH, "sites": sites, "cases": cases, "radec": radec}
    path = root / "tests" / "data" / "reference" / "tracking_geometry_astropy.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
