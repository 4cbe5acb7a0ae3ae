"""A small run of the site benchmark inside the suite: correctness only, figures printed."""

import bench_site


def test_small_site_benchmark_runs(capsys):
    f = bench_site.main(3)
    print({k: round(v, 3) for k, v in f.items()})
    assert f["projects"] == 3
    assert 0 < f["weasyprint_share_pct"] < 100 and 0 < f["matplotlib_share_pct"] < 100
    assert f["noop_s"] > 0 and f["one_changed_s"] > 0
