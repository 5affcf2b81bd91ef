"""The report figures: PNG bytes, fixed size, the same bytes for the same data."""

from __future__ import annotations

import struct

from report_samples import tiny_report

from trainer.reports.plots import (DPI, ROLE_PLOT_SIZE, SQUARE_SIZE, config_styles, learning_curve_plot,
                                   precision_recall_plot, reliability_plot, role_f1_plot)

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def png_size(png: bytes) -> tuple[int, int]:
    """Width and height from the IHDR chunk."""
    assert png[:8] == PNG_SIGNATURE
    assert png[12:16] == b"IHDR"
    return struct.unpack(">II", png[16:24])


def test_role_f1_plot_is_a_png_of_fixed_size_without_software_stamp() -> None:
    png = role_f1_plot(tiny_report())
    assert png_size(png) == (round(ROLE_PLOT_SIZE[0] * DPI), round(ROLE_PLOT_SIZE[1] * DPI)) == (900, 420)
    assert b"Software" not in png
    assert b"matplotlib" not in png.lower()


def test_role_f1_plot_gives_identical_bytes_for_identical_data() -> None:
    assert role_f1_plot(tiny_report()) == role_f1_plot(tiny_report())


def test_role_f1_plot_changes_with_the_data() -> None:
    report = tiny_report()
    changed = tiny_report()
    changed["systems"][0]["scores"]["roles"]["mover"]["f1"] = 0.2
    changed["systems"][0]["intervals"]["mover"] = [0.1, 0.3]
    assert role_f1_plot(report) != role_f1_plot(changed)


def test_learning_curve_plot_is_none_without_a_curve() -> None:
    assert learning_curve_plot(tiny_report()) is None
    report = tiny_report()
    report.pop("learning_curve")
    assert learning_curve_plot(report) is None


def test_learning_curve_plot_is_deterministic_and_two_rows_for_six_panels() -> None:
    first = learning_curve_plot(tiny_report(curve=True))
    second = learning_curve_plot(tiny_report(curve=True))
    assert first is not None and first == second
    # micro + four roles + trigger = six panels, three to a row: 3 x 3.4 in wide, 2 x 2.7 in high, at 100 dpi
    assert png_size(first) == (1020, 540)


def test_config_styles_follow_report_order_and_cover_curve_only_configs() -> None:
    report = tiny_report(curve=True)
    report["learning_curve"]["systems"]["gamma"] = report["learning_curve"]["systems"]["beta"]
    assert config_styles(report) == {"alpha": ("#0072b2", "o"), "beta": ("#e69f00", "s"), "gamma": ("#009e73", "D")}


def test_learning_curve_plot_draws_the_interval_bands() -> None:
    report = tiny_report(curve=True)
    without = tiny_report(curve=True)
    for points in without["learning_curve"]["systems"].values():
        for point in points:
            point.pop("intervals")
    assert learning_curve_plot(report) != learning_curve_plot(without)


def test_reliability_and_precision_recall_plots_are_fixed_size_pngs_and_none_without_confidences() -> None:
    system = tiny_report()["systems"][0]
    for plot in (reliability_plot, precision_recall_plot):
        png = plot(system)
        assert png is not None and png == plot(tiny_report()["systems"][0])
        assert png_size(png) == (round(SQUARE_SIZE[0] * DPI), round(SQUARE_SIZE[1] * DPI)) == (560, 420)
    bare = dict(system, calibration={"trigger": {"instances": 0, "without_confidence": 3, "ece": None, "bins": []}},
                thresholds={"trigger": {"gold": 3, "points": [], "best": None}})
    assert reliability_plot(bare) is None and precision_recall_plot(bare) is None
