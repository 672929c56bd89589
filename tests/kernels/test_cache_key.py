"""The kernels' numba cache is keyed by every source it depends on (stale compiles cannot load)."""

from pathlib import Path

import thinfilm.engines._kernels as kernels


def test_key_changes_when_a_dependency_changes(tmp_path, monkeypatch):
    copies = []
    for k, p in enumerate(kernels._SOURCES):
        q = tmp_path / str(k) / p.name
        q.parent.mkdir()
        q.write_bytes(p.read_bytes())
        copies.append(q)
    monkeypatch.setattr(kernels, "_SOURCES", copies)
    before = kernels._source_key()
    assert before == kernels.KEY  # same sources, same key
    nb = next(q for q in copies
              if q.name == "neighbours.py" and "OFFSETS = np.zeros" in q.read_text())
    nb.write_text(nb.read_text() + "\n# edited\n")
    assert kernels._source_key() != before


def test_the_key_covers_the_neighbour_tables_and_every_kernel_module():
    names = {p.name for p in kernels._SOURCES}
    here = Path(kernels.__file__).parent
    assert {p.name for p in here.glob("*.py")} <= names
    assert any(p.parent.name == "model" and p.name == "neighbours.py" for p in kernels._SOURCES)


def test_kernels_use_the_keyed_cache_directory():
    from thinfilm.engines._kernels.field import observables

    locator = observables._cache._impl.locator
    assert isinstance(locator, kernels.SourceKeyedLocator)
    assert Path(locator.get_cache_path()).name.endswith(kernels.KEY)
