"""Bad input raises exceptions of the MeshboundError hierarchy, naming the file, key path, line
and column the library names."""

import pickle

import numpy as np
import pytest

import meshbound as mb


def test_study_error_names_file_key_line_and_column(tmp_path):
    study = tmp_path / "bad.yaml"
    study.write_text(
        "format: 1\n"
        "title: bad cells\n"
        "meshes:\n"
        "  - {name: A, cells: 4.0e6}\n"
        "  - {name: B, cells: -2}\n"
        "  - {name: C, cells: 5.0e5}\n"
        "quantities:\n"
        "  head: {values: {A: 1.0, B: 1.1, C: 1.3}}\n"
    )
    with pytest.raises(mb.StudyError) as info:
        mb.assess(study)
    e = info.value
    assert isinstance(e, mb.MeshboundError) and isinstance(e, ValueError)
    assert e.file == str(study)
    assert e.key_path == "meshes[1].cells"
    assert e.line == 5
    assert e.column is not None and e.column > 1
    assert str(study) in str(e) and "meshes[1].cells" in str(e)
    # The attributes survive pickling (errors raised on Dask workers come back whole).
    back = pickle.loads(pickle.dumps(e))
    assert (back.file, back.key_path, back.line, back.column) == (
        e.file,
        e.key_path,
        e.line,
        e.column,
    )


def test_a_csv_error_names_the_csv_file_and_line(tmp_path):
    (tmp_path / "L1.csv").write_text("probe,u\np0,1.0\np1,1.0\n")
    (tmp_path / "L2.csv").write_text("probe,u\np0,1.1\np1,abc\n")
    (tmp_path / "L3.csv").write_text("probe,u\np0,1.3\np1,1.3\n")
    study = tmp_path / "s.yaml"
    study.write_text(
        "format: 1\ntitle: t\nmeshes:\n"
        "  - {name: L1, cells: 8.0e6}\n  - {name: L2, cells: 2.4e6}\n  - {name: L3, cells: 7.5e5}\n"
        "fields:\n  f:\n    id: probe\n    columns: [u]\n"
        "    data: {L1: L1.csv, L2: L2.csv, L3: L3.csv}\n"
    )
    with pytest.raises(mb.StudyError) as info:
        mb.assess(study)
    assert "L2.csv" in str(info.value)
    assert "3" in str(info.value)  # the line of `abc`


def test_missing_study_file():
    with pytest.raises(mb.StudyError) as info:
        mb.assess("/nonexistent/study.yaml")
    assert info.value.file == "/nonexistent/study.yaml"


@pytest.mark.parametrize(
    "call",
    [
        lambda: mb.three_mesh([1.0, 1.0, 2.0], [1.0, 2.0, 3.0]),
        lambda: mb.three_mesh([1.0, 2.0, 4.0], [1.0, float("nan"), 3.0]),
        lambda: mb.three_mesh([1.0, 2.0, 4.0], [1.0, 2.0, 3.0], rule="no_such_rule"),
        lambda: mb.three_mesh([1.0, 2.0, 4.0], [1.0, 2.0, 3.0], formal_order=0.0),
        lambda: mb.two_mesh_gci([2.0, 1.0], [1.0, 2.0]),
        lambda: mb.least_squares([1.0, 2.0, 4.0], [1.0, 2.0, 3.0]),
        lambda: mb.estimate_points([1.0, 2.0], np.ones((3, 2))),
        lambda: mb.estimate_points([1.0, 2.0, 4.0], np.ones((3, 4))),
        lambda: mb.estimate_points([1.0, 2.0, 4.0], np.ones(3)),
        lambda: mb.estimate_points([1.0, 2.0, 4.0], np.ones((3, 3)), noise_floor=-1.0),
        lambda: mb.summarise_points([1.0, 2.0, 4.0], np.ones((3, 3)), weights=[1.0, -1.0, 1.0]),
        lambda: mb.summarise_points([1.0, 2.0, 4.0], np.ones((3, 3)), ids=["a"]),
    ],
)
def test_estimator_input_errors(call):
    with pytest.raises(mb.EstimateInputError) as info:
        call()
    assert isinstance(info.value, ValueError)
    assert str(info.value)


def test_history_errors():
    with pytest.raises(mb.HistoryError, match="no samples"):
        mb.reduce_history([])
    with pytest.raises(mb.HistoryError, match="not finite"):
        mb.reduce_history([1.0, float("inf")])
    with pytest.raises(mb.HistoryError):
        mb.reduce_history(np.ones(200), batches=1)


def test_summaries_of_different_settings_do_not_merge():
    a = mb.summarise_points([1.0, 2.0, 4.0], np.ones((2, 3)), name="u")
    b = mb.summarise_points([1.0, 2.0, 3.0], np.ones((2, 3)), name="u")
    c = mb.summarise_points([1.0, 2.0, 4.0], np.ones((2, 3)), name="v")
    with pytest.raises(mb.MergeError):
        a.merge(b)
    with pytest.raises(mb.MergeError):
        a.merge(c)
