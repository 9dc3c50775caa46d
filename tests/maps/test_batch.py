import polars as pl
import pytest

from workbench.cli import main
from workbench.demo import demo_file
from workbench.errors import InputError
from workbench.maps import Runner
from workbench.maps.batch import SUMMARY_COLUMNS, expand_paths, run_batch
from workbench.maps.pipeline import spectrum_csv


@pytest.fixture(scope="module")
def folder(tmp_path_factory, counts, energy_eV):
    d = tmp_path_factory.mktemp("spectra")
    # Two X-ray spectra: the sum of the planted test cube (conftest) and an invented demo one.
    (d / "chip.csv").write_bytes(spectrum_csv(energy_eV, counts.sum(axis=(0, 1)), "planted"))
    (d / "ground.csv").write_bytes(demo_file("white_pigment"))
    (d / "broken.csv").write_bytes(b"this is not a spectrum\n")
    (d / ".hidden").write_bytes(b"skipped")
    return d


def test_expand_paths(folder):
    assert [p.name for p in expand_paths([folder])] == ["broken.csv", "chip.csv", "ground.csv"]
    assert [p.name for p in expand_paths([str(folder / "g*.csv"), folder / "ground.csv"])] == [
        "ground.csv"
    ]
    with pytest.raises(InputError, match="matches no file"):
        expand_paths([str(folder / "*.xyz")])
    with pytest.raises(InputError, match="does not exist"):
        expand_paths([folder / "nope.csv"])


def test_batch_equals_single_file_match_byte_for_byte(folder, tmp_path):
    with Runner("threads") as runner:
        rows = run_batch([folder], runner, tmp_path / "out")
    by_name = {r["file"].rsplit("/", 1)[-1]: r for r in rows}
    for name in ("chip.csv", "ground.csv"):
        single = tmp_path / f"{name}.single.json"
        assert main(["match", str(folder / name), "--json", str(single)]) == 0
        assert (tmp_path / "out" / f"{name}.json").read_bytes() == single.read_bytes()
        assert by_name[name]["error"] is None
    assert by_name["broken.csv"]["error"] and by_name["broken.csv"]["json"] is None
    # The invented white ground was synthesised with Pb L as its strongest family (workbench.demo).
    assert "Pb L" in by_name["ground.csv"]["established"]
    table = pl.read_parquet(tmp_path / "out" / "summary.parquet")
    assert tuple(table.columns) == SUMMARY_COLUMNS
    assert table.equals(pl.read_csv(tmp_path / "out" / "summary.csv", schema=table.schema))
    assert table["sha256"].to_list()[1] == by_name["chip.csv"]["sha256"]


def test_batch_on_a_local_cluster_gives_the_same_files(folder, tmp_path):
    with Runner("threads") as runner:
        run_batch([folder], runner, tmp_path / "a")
    with Runner(None, n_workers=2, processes=False) as runner:
        run_batch([folder], runner, tmp_path / "b")
    for name in ("chip.csv.json", "ground.csv.json", "summary.csv"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()
