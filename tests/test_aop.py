"""The acoustic overload point: the lowest level at which the capsule's THD reaches 10 %, the
readout clips or the digital output reaches full scale, with the limiting mechanism named.

The capsule's own 10 % points come from the response and large-deflection sections (they are
tested in test_distortion.py and test_large_deflection.py); here they are given as numbers of the
size the demo reaches at draft accuracy, and the readout's levels are recomputed by hand: a node
amplitude V (peak) at sensitivity S (V/Pa rms) is the SPL 20·log10(V/(√2·S·20 µPa)) (a sine's
peak is √2 its rms; 20 µPa re IEC 61672-1), a full-scale sine is 0 dBFS (AES17 [from memory]).
"""
import math

import pytest

from diagap.design import demo_text, parse_design
from diagap.packaged import LIMITS, capsule_overload, packaged_section
from diagap.stages import Section

P_REF = 20e-6
S = 4.07e-3  # V/Pa, the demo's sensitivity at draft accuracy
NOISE = 37.4  # dB(A) SPL


def design(readout: str | None):
    import tomllib

    text = demo_text() + ("" if readout is None else "[readout]\n" + readout)
    return parse_design(tomllib.loads(text))


def response(hb=None, curve_end=142.0):
    return Section({"sensitivity_v_per_pa": S, "sensitivity_db_v_per_pa": 20 * math.log10(S),
                    "noise_dba_spl": NOISE, "aop_10pct_spl_db": hb, "thd_frequency_hz": 1000.0,
                    "thd_vs_spl": [[60.0, 1e-5], [curve_end, 0.06]]}, {"noise_dba_spl": 0.01})


def large_deflection(qs=145.3, contact=147.1):
    return Section({"thd_10pct_spl_db_quasistatic": qs, "contact_spl_db_at_bias": contact})


def clip_spl(v_peak):
    return 20 * math.log10(v_peak / (math.sqrt(2) * S * P_REF))


def test_low_clipping_level_limits():
    d = design('noise_density = "20 nV/rtHz"\nclip_amplitude = "0.2 V"\n')
    r = packaged_section(d, response(), large_deflection()).data
    assert r["aop_limited_by"] == "readout clipping"
    assert r["aop_db_spl"] == pytest.approx(clip_spl(0.2), rel=1e-12, abs=0)  # 124.8 dB SPL
    assert r["dynamic_range_db"] == pytest.approx(clip_spl(0.2) - NOISE, rel=1e-12, abs=0)
    assert r["scope"] == "packaged" and r["capsule_aop_db_spl"] == pytest.approx(145.3, rel=1e-12,
                                                                                 abs=0)


def test_high_clipping_level_leaves_the_capsule_distortion():
    d = design('noise_density = "20 nV/rtHz"\nclip_amplitude = "20 V"\n')
    r = packaged_section(d, response(), large_deflection()).data
    assert clip_spl(20.0) > 160.0
    assert r["aop_limited_by"] == "capsule distortion"
    assert r["aop_db_spl"] == pytest.approx(145.3, rel=1e-12, abs=0)
    # the harmonic balance's own 10 % point, where it is reached, comes first
    r = packaged_section(d, response(hb=138.2), large_deflection()).data
    assert (r["aop_db_spl"], r["aop_limited_by"]) == (138.2, "capsule distortion")


def test_digital_full_scale_can_limit():
    d = design('noise_density = "20 nV/rtHz"\nclip_amplitude = "1 V"\nfull_scale_spl = 120\n')
    r = packaged_section(d, response(), large_deflection()).data
    assert r["aop_limited_by"] == "digital full scale"
    assert r["aop_db_spl"] == pytest.approx(120.0, rel=1e-12, abs=0)
    assert r["sensitivity_dbfs"] == pytest.approx(20 * math.log10(1 / P_REF) - 120.0, rel=1e-12,
                                                  abs=0)


def test_without_readout_the_capsule_alone_and_says_so():
    r = packaged_section(design(None), response(), large_deflection()).data
    assert r["scope"] == "capsule"
    assert r["aop_limited_by"] == "capsule distortion"
    assert "capsule only" in r["aop_note"]
    assert "readout_clip_spl_db" not in r and "sensitivity_dbfs" not in r


def test_capsule_point_where_the_harmonic_balance_ends():
    # quasi-static 10 % point, never below the last level the harmonic balance solved
    assert capsule_overload(response().data, large_deflection().data)[:2] == (145.3, LIMITS[0])
    assert capsule_overload(response(curve_end=146.0).data,
                            large_deflection().data)[0] == pytest.approx(146.0, rel=1e-12, abs=0)
    # contact before 10 % THD
    spl, by, _ = capsule_overload(response().data, large_deflection(qs=None).data)
    assert (spl, by) == (147.1, "backplate contact")
    # nothing computed: no overload point, and the run says why
    r = packaged_section(design(None), response(), None).data
    assert r["aop_db_spl"] is None and r["aop_limited_by"] == "not reached"
    assert r["dynamic_range_db"] is None
