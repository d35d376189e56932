"""`course plot`: never over a file or through a link unasked, no crash on any date, doses drawn as one artist."""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.course.plot import draw
from osmodose.course.series import course_series
from osmodose.course.store import save_episode
from tests.course_build import T0, dose, episode, lab, reading


def plot(*args: object) -> int:
    return main(["course", "plot", *[str(a) for a in args]])


@pytest.fixture
def ep_file(tmp_path: Path) -> Path:
    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 130), lab(6, 134)], doses=[dose(1, "nacl-3", 150, 20)]), path, create=True)
    return path


def test_plot_never_follows_a_symlink(ep_file: Path, tmp_path: Path, capsys) -> None:
    target = tmp_path / "verifications.jsonl"
    target.write_text("five records\n", encoding="utf-8")
    link = tmp_path / "link.png"
    link.symlink_to(target)
    assert plot(ep_file, "--out", link, "--force") == 2
    assert capsys.readouterr().err == (
        f"osmodose: out: {link} is a symbolic link: osmodose never writes through or over one (give the file itself)\n"
    )
    assert target.read_text(encoding="utf-8") == "five records\n" and link.is_symlink()


def test_plot_never_replaces_a_file_without_force(ep_file: Path, tmp_path: Path, capsys) -> None:
    out = tmp_path / "course.png"
    out.write_bytes(b"an older plot")
    assert plot(ep_file, "--out", out) == 2
    assert capsys.readouterr().err == (
        f"osmodose: out: {out} already exists: choose another file or add --force to replace it\n"
    )
    assert out.read_bytes() == b"an older plot"
    assert plot(ep_file, "--out", out, "--force") == 0
    assert out.read_bytes().startswith(b"\x89PNG\r\n\x1a\n")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["course.png", "ep.json"]


@pytest.mark.parametrize("year", [1, 9999])
def test_a_lab_dated_at_the_ends_of_the_calendar_is_one_line_not_a_crash(tmp_path: Path, capsys, year: int) -> None:
    path = tmp_path / "ep.json"
    far = lab(0, 140).model_copy(update={"time": T0.replace(year=year, month=12 if year > 1 else 1, day=1)})
    save_episode(episode(labs=[lab(0, 141), far]), path, create=True)  # a hand-edited file: no time check
    assert plot(path, "--out", tmp_path / "x.png") == 2
    err = capsys.readouterr().err
    assert err.startswith("osmodose: plot: needs entries within one year, dated 1900 to 2999: these run from ")
    assert err.endswith("a time is probably mistyped (course show lists the entries, course amend corrects one)\n")
    assert not (tmp_path / "x.png").exists()


def test_doses_are_one_artist_however_many(demo) -> None:
    from matplotlib import pyplot as plt

    few = episode(labs=[lab(0, 130)], doses=[dose(1, "nacl-3", 100)])
    many = episode(labs=[lab(0, 130)], doses=[dose(1 + k / 10, "nacl-3", 100) for k in range(200)])
    counts = []
    for ep in (few, many):
        figure = draw(course_series(ep, demo))
        top = figure.axes[0]
        counts.append((len(top.lines), len(top.collections)))
        plt.close(figure)
    assert counts[0] == counts[1]


@pytest.mark.parametrize(
    ("hours", "with_year"),
    [
        ((0.0, 6.0), False),  # 1 December 2026, this year by the tests' clock
        ((0.0, 24.0 * 40), True),  # into January 2027: across a year boundary
        ((-24.0 * 365, -24.0 * 364), True),  # December 2025: not this year
    ],
)
def test_the_axis_shows_the_year_when_it_is_needed(demo, hours: tuple[float, float], with_year: bool) -> None:
    from matplotlib import pyplot as plt

    ep = episode(labs=[lab(h, 140) for h in hours], readings=[reading(hours[0], 80, 20)])
    figure = draw(course_series(ep, demo))
    shown = figure.axes[1].xaxis.get_major_formatter().fmt
    plt.close(figure)
    assert ("%Y" in shown) is with_year
