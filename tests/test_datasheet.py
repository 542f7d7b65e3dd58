"""The datasheet is enough to design with: step cap from the card's own precession period, usage
lines safe in every library section, every node listed with its scale, conditions on every
figure, the options the decks use."""
from __future__ import annotations

import json
import re

import numpy as np
import pytest

from compactgen.targets import render
from compactgen.jobs.build import build_files
from compactgen.model.evaluate import figures
from compactgen.sim import run_ngspice
from compactgen.sim.options import DECK_OPTIONS, POINTS_PER_PERIOD_COROTATING as POINTS_PER_PERIOD
from compactgen.sim.options import POINTS_PER_PERIOD as POINTS_PER_PERIOD_LAB

from helpers import ROOT, card_with, example_card


@pytest.fixture(scope="module")
def built():
    card = example_card()
    return card, card.ir(), build_files(card)


def _section(md: str, title: str) -> str:
    start = md.index(f"## {title}")
    nxt = md.find("\n## ", start + 3)
    return md[start:nxt if nxt > 0 else None]


def test_step_cap_is_the_cards_own_precession_period_over_n(built):
    card, ir, files = built
    md = files[f"{ir.name}.md"]
    cap = 1.0 / (POINTS_PER_PERIOD * figures(ir)["f_fmr"])
    assert f"**Step cap {cap * 1e12:.3g} ps**" in md and f"0 {cap * 1e12:.3g}p\n```" in md
    assert "1/25 of the precession period" not in md and "about 2e-12" not in md
    # another card, another period: a stiffer free layer precesses faster and gets a smaller cap
    other = card_with("stt-mtj", "stiff", diameter='"35 nm"', t_free='"1.1 nm"', ki='"1.3 mJ/m^2"')
    f2 = figures(other.ir())["f_fmr"]
    assert f2 > 1.5 * figures(ir)["f_fmr"]
    md2 = build_files(other)["stiff.md"]
    assert f"**Step cap {1e12 / (POINTS_PER_PERIOD * f2):.3g} ps**" in md2
    # the default rest state integrates the stt free layer without its precession; with an in-plane
    # field the precession is on the nodes and the cap resolves it
    tilted = card_with("stt-mtj", "tilted", hx='"5 mT"')
    f3 = figures(tilted.ir())["f_fmr"]
    assert f"**Step cap {1e12 / (POINTS_PER_PERIOD_LAB * f3):.3g} ps**" in build_files(tilted)["tilted.md"]


def test_options_of_the_designer_decks_are_the_ones_the_datasheet_states(built):
    md = built[2][f"{built[1].name}.md"]
    line = " ".join(f"{k}={v}" for k, v, _ in DECK_OPTIONS)
    assert f".options {line}\n" in md
    for k, v, _ in DECK_OPTIONS:
        assert f"| `{k}` | {v} |" in md
    for deck in sorted((ROOT / "ngspice_decks").glob("*.cir")) + [ROOT / "ngspice_decks" / "stt_2x2_array.cir.j2"]:
        opts = re.search(r"^\.options (.*)$", deck.read_text(), re.M).group(1)
        assert opts.startswith(line), (deck.name, opts)


def test_usage_lines_list_every_instance_parameter_and_no_draw(built):
    _, ir, files = built
    md, lib = files[f"{ir.name}.md"], files[f"{ir.name}.lib"]
    instance = [s.name for s in ir.params
                if s.kind == "instance" and not s.name.startswith(("draw_global_", "draw_mismatch_"))]
    usage = render.usage_instance(ir)
    for text in (md, lib):
        assert usage in text
    for block in re.findall(r"```(?:spice)?\n(.*?)```", _section(md, "Use"), re.S):
        for line in block.splitlines():
            if line.lower().startswith("x1"):
                assert all(f" {n}=" in line for n in instance), line
                assert "draw_mismatch_" not in line and "draw_global_" not in line, line


def test_every_node_of_the_subcircuit_is_listed_with_its_scale(built):
    _, ir, files = built
    md, lib = files[f"{ir.name}.md"], files[f"{ir.name}.lib"]
    body = lib[lib.index(".subckt"):lib.index(".ends")]
    nodes = {ir.terminals[0].name, ir.terminals[1].name}
    for line in body.splitlines():
        f = line.split()
        if f and f[0][0] in "RBCVI" and not line.startswith("+"):
            nodes |= {n for n in f[1:3] if n != "0"}
    table = _section(md, "Nodes inside the models")
    rows = {}
    for line in table.splitlines():
        cells = [c.strip() for c in re.split(r"(?<!\\)\|", line)[1:-1]]  # cells may hold escaped pipes
        if len(cells) == 4 and cells[0].startswith("`"):
            rows[cells[0].strip("`")] = cells[3]
    assert nodes == set(rows), nodes ^ set(rows)
    assert all(v.strip() for v in rows.values())
    assert rows["res"].strip() == "1 V = 1 kohm" and rows["jdens"].strip() == "1 V = 1 MA/cm^2"


def test_every_figure_states_its_conditions(built):
    _, ir, files = built
    md = files[f"{ir.name}.md"]
    rows = {m.group(1): m.group(2) for m in re.finditer(r"^\| `(\w+)` \| [^|]+ \| ([^|]+) \|", _section(md, "Key figures"), re.M)}
    assert set(rows) == {f.name for f in ir.figures}
    assert "T = tnom = 27 degC" in rows["delta"]
    assert "fixed read bias of this datasheet, not a card parameter" in rows["tmr_read"] and "0.1 V" in rows["tmr_read"]


def test_monte_carlo_section_says_how_to_seed_and_read_back(built):
    _, ir, files = built
    mc = _section(files[f"{ir.name}.md"], "Corners and Monte Carlo")
    assert ".options seed=N" in mc and "@i.x1.idraw_mismatch_ra[dc]" in mc
    assert "typical mean only" not in mc and "no Monte Carlo about ss or ff" in mc


@pytest.mark.simulator
def test_the_usage_line_keeps_mismatch_on_in_the_mc_section(tmp_path, ngspice):
    # the old usage line set every draw to 0.0 on the instance: copied into an `mc` run it turned
    # mismatch off and every copy of the cell read the same resistance
    ir = example_card().ir()
    (tmp_path / f"{ir.name}.lib").write_text(render.ngspice(ir))
    usage = render.usage_instance(ir)
    lines = [usage.replace("X1 t b", f"X{i} t 0", 1) for i in range(1, 4)]
    deck = "\n".join([f"usage line in mc", f".lib {tmp_path / ir.name}.lib mc", "Vt t 0 0.1", *lines,
                      ".options seed=5", ".tran 1p 2p"]) + "\n"
    data = run_ngspice(deck)
    r = [float(data[f"x{i}.res"][0]) for i in range(1, 4)]
    assert len(set(r)) == 3 and np.ptp(r) / np.mean(r) > 1e-4  # mismatch sigma of ra is 1.5 %


def test_range_output_drive_ratio_is_listed_among_the_outputs_with_unit_and_description(built):
    _, ir, files = built
    r = ir.range_output()
    assert r.name == "drive_ratio"
    md = files[f"{ir.name}.md"]
    outputs = _section(md, "Outputs")
    line = next(x for x in outputs.splitlines() if x.startswith(f"- `{r.name}`:"))
    assert r.desc in line and f"ngspice node `X1.{r.name}` (1 V = 1)" in line and f"`{r.name}` [{r.unit}]" in line
    assert f", `{r.name}` [{r.unit}]." in md  # the Verilog-A output variables
    assert f"`{r.name}` = max(" in _section(md, "Calibrated range")
    va = files[f"{ir.name}.va"]
    assert f"real {r.name};" in va and f"(*desc=\"{r.desc}\", units=\"{r.unit}\"*)" in va
    assert f"$warning(\"{ir.name}: driven beyond its calibrated range ({r.name} = %g)\", {r.name});" in va
    for text in files.values():
        if isinstance(text, str):
            assert not re.search(r"\bstress\b", text)


@pytest.fixture(scope="module", params=["pmtj35_demo", "sot50_demo", "dwtrack_demo"])
def built_kind(request):
    card = example_card(request.param)
    return card, card.ir(), build_files(card)


def test_every_file_quotes_one_equations_digest_taken_before_lowering(built_kind):
    """The .va is printed from the hoisted IR, the .lib from the B-source form: both quote the digest
    of the IR as the device kind built it, as the datasheet and the manifest do."""
    card, ir, files = built_kind
    want = render.digests(ir)
    assert want["digest"] == ir.digest()
    found = {}
    for name, text in files.items():
        if isinstance(text, bytes) or not name.endswith((".va", ".lib", ".md")):
            continue
        found[name] = set(re.findall(r"equations digest\s+`?([0-9a-f]{16})", text))
    assert set(found) == {f"{ir.name}.va", f"{ir.name}.lib", f"{ir.name}.osdi.lib", f"{ir.name}.md"}
    assert all(v == {want["digest"]} for v in found.values()), found
    manifest = json.loads(files["manifest.json"])
    assert (manifest["model_digest"], manifest["parameter_digest"]) == (want["digest"], want["param_digest"])


def test_each_section_once_and_corners_for_every_kind_with_variation(built_kind):
    card, ir, files = built_kind
    md = files[f"{ir.name}.md"]
    heads = re.findall(r"^## (.+)$", md, flags=re.M)
    assert len(heads) == len(set(heads)), heads
    assert md.count("Parameter-only quantities:") == 1
    assert any(s.name.startswith("draw_mismatch_") for s in ir.params)
    corners = _section(md, "Corners and Monte Carlo")
    assert "`mc_global`" in corners and "`mc_local`" in corners and "draw_mismatch_" in corners


def test_sources_cite_publications_not_notes_that_do_not_ship(built_kind):
    """Sources name published work (or say 'common practice, no source'); a value from memory says
    which value it is; no pointer into design notes that are not part of the project."""
    card, ir, files = built_kind
    for name, text in files.items():
        if isinstance(text, str):
            assert "PHYSICS" not in text, name
    md = files[f"{ir.name}.md"]
    assert "(from memory)" not in md
    for m in re.finditer(r"from memory", md):
        before = md[max(0, m.start() - 60):m.start()]
        assert re.search(r"(range|value|values|reference|page|signs|T_c|n ~|[0-9])[^|]*$", before), before
