"""The response trace chart's key shows each factor as it is drawn (common practice:
a legend symbol matches its mark): a line for a factor on a scale, a square for a
factor with named levels, drawn as one square per level."""
from __future__ import annotations

import json

from tradeoff import fit_study, load_study, optimize
from tradeoff.maps.slices import slices
from tradeoff.maps.trace_picture import trace_picture
from tradeoff.study.demo import demo_study_path


def _scales(spec: dict) -> list[dict]:
    """Every encoding's scale in a layered specification."""
    out = []
    for layer in spec.get("layer", []):
        for channel, enc in layer.get("encoding", {}).items():
            if isinstance(enc, dict) and "scale" in enc:
                out.append({"channel": channel, **enc["scale"]})
    return out


def test_key_shows_a_square_for_a_factor_drawn_as_squares():
    study = load_study(demo_study_path())
    fit = fit_study(study)
    best = optimize(study, top=1, seed=study.seed, fit=fit).best
    table = slices(study, best.settings, fit=fit)
    named = {f.name for f in study.factors if f.is_categorical}
    assert named, "the demo has a factor with named levels"
    spec = json.loads(trace_picture(table, study.responses[0].name, "t",
                                    {f.name: f.label for f in study.factors}).to_json())
    shapes = [s for s in _scales(spec) if s["channel"] == "shape"]
    assert len(shapes) == 1
    drawn = dict(zip(shapes[0]["domain"], shapes[0]["range"]))
    assert drawn == {f.name: "square" if f.name in named else "stroke"
                     for f in study.factors}
    dashes = [s for s in _scales(spec) if s["channel"] == "strokeDash"][0]
    for name, dash in zip(dashes["domain"], dashes["range"]):
        if name in named:  # the square's outline is whole
            assert dash == [1, 0]
