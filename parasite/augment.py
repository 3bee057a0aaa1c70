"""The library API of the main job: a netlist and a routes file in, the
augmented netlist and the report out.

One run flows one way: inputs (:mod:`parasite.pipeline`) -> extraction ->
copper network (:func:`parasite.network.build_network`) -> the loops
(:mod:`parasite.loops`) and probes (:mod:`parasite.probes`) on that network ->
the report (:mod:`parasite.report`) and the netlist (:mod:`parasite.writer`).

:func:`augment_text` needs no files (text in, text and a dict out);
:func:`augment_files` reads the two files and is what ``parasite augment`` and
``parasite report`` call. Nothing here prints; input errors are
:class:`parasite.errors.ParasiteError` with the file and the place.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from parasite.network import Network, NetworkOptions, build_network
from parasite.network.branches import Branch

if TYPE_CHECKING:
    from parasite.network.ladders import BroadbandOptions
    from parasite.pipeline import Extraction, FastExtraction, Inputs

AugmentOptions = NetworkOptions
"""The options of one run (``min_coupling``, ``keep_segments``, ``loop_tolerance``)."""


@dataclass(frozen=True)
class AugmentResult:
    netlist_bytes: bytes
    report: dict[str, Any]
    node_names: dict[int, str]  # graph node id -> netlist node name
    branches: list[Branch] = field(default_factory=list)
    inductor_names: list[str] = field(default_factory=list)  # per branch
    network: Network | None = None

    @property
    def netlist_text(self) -> str:
        """The augmented netlist as text (decoded as the netlist was read: UTF-8,
        undecodable bytes kept as surrogate escapes)."""
        return self.netlist_bytes.decode("utf-8", errors="surrogateescape")


def analyse(network: Network) -> dict[str, Any]:
    """The report of ``network``: its loops, its probes' pick-up, and the summary."""
    from parasite.extract.operator import DenseInductance
    from parasite.loops import loop_result_dict, loop_results
    from parasite.pipeline import Extraction
    from parasite.probes import probe_report
    from parasite.report import build_report, node_labels

    extraction = network.extraction
    assert isinstance(extraction, Extraction), "the dense path's report"
    graph, netlist = extraction.inputs.graph, extraction.inputs.netlist
    results = loop_results(graph, netlist, extraction.L, extraction.R) if graph.routes.loops else []
    loops = [loop_result_dict(r) for r in results]
    probe_entries = (probe_report(graph, DenseInductance(extraction.L), extraction.R,
                                  node_labels(network), results, extraction.frequency)
                     if graph.routes.probes else [])
    report = build_report(network, loops, probe_entries)
    if results:
        from parasite.field.loop_report import loop_sections
        from parasite.report import add_loop_sections

        add_loop_sections(report, loop_sections(graph, results, extraction.L))
    return report


def augment(extraction: Extraction, options: AugmentOptions | None = None,
            broadband: BroadbandOptions | None = None, model: str = "auto") -> AugmentResult:
    """Build the augmented netlist and the JSON report of one extraction; with
    ``broadband`` every branch is a fitted R-L ladder (:mod:`parasite.network.ladders`);
    ``model`` ``auto``, ``full`` or ``reduced`` (:mod:`parasite.network.reduce_choice`;
    the ladders are written per branch, so ``broadband`` goes with the full model)."""
    from parasite.network.reduce import DEFAULT_FMAX
    from parasite.network.reduce_choice import choose_model, reduction_report
    from parasite.report import set_written_summary
    from parasite.writer import initial_current_warnings, write_netlist

    network = build_network(extraction, options)
    report = analyse(network)
    ladders = None
    if broadband is not None and network.branches:
        from parasite.network.ladders import branch_ladders

        ladders = branch_ladders(network, broadband)
        ids = [extraction.inputs.graph.segments[b.segments[0]].id for b in network.branches]
        report["broadband"] = ladders.report(ids)
    if extraction.inputs.graph.segments:
        report["warnings"] += initial_current_warnings(extraction.inputs.netlist,
                                                       set(extraction.inputs.graph.anchors))
    f_max = DEFAULT_FMAX if ladders is None else max(DEFAULT_FMAX, ladders.band[1])
    chosen, reduction, why = choose_model(network, model, ladders=ladders, f_max=f_max)
    report["model"] = reduction_report(chosen, reduction, why)
    set_written_summary(report, network, reduction if chosen == "reduced" else None)
    written = write_netlist(network, ladders, reduction if chosen == "reduced" else None)
    return AugmentResult(written.netlist_bytes, report, network.node_names, network.branches,
                         written.inductor_names, network)


def augment_fast(extraction: FastExtraction, options: AugmentOptions | None = None,
                 model: str = "auto", *, progress: Any = None, status: Any = None,
                 scheduler: Any = None) -> AugmentResult:
    """The augmented netlist and report of a fast-path extraction (the inductance as an
    operator, :func:`parasite.pipeline.extract_fast`): the report of
    :func:`parasite.report_fast.analyse_fast`, and the copper written as its reduced
    model (:mod:`parasite.network.reduce_operator`); the full model, every branch and its
    couplings, needs the dense matrix and is refused (``model`` ``full``).
    ``progress(done, total)`` after each loop's solve, ``status(text)`` during the solves."""
    from parasite.errors import ExtractionError
    from parasite.network import build_fast_network
    from parasite.network.reduce_choice import fast_reduction_report, reduce_fast
    from parasite.report import reduced_summary
    from parasite.report_fast import LEFT_OUT, analyse_fast
    from parasite.writer import write_netlist

    options = options or AugmentOptions()
    if model == "full":
        raise ExtractionError(
            "the full model (every branch and its couplings) needs the dense inductance "
            "matrix, and this board is held as the operator: write the reduced model "
            "(--model reduced or auto), or coarsen the mesh for --inductance dense",
            file=extraction.inputs.routes_path)
    network = build_fast_network(extraction, options)
    report = analyse_fast(extraction, min_coupling=options.min_coupling, progress=progress,
                          status=status)
    report["summary"]["branches"] = len(network.branches)
    reduction = None
    if network.branches:
        reduction, found = reduce_fast(network, scheduler=scheduler, status=status)
        report["model"] = fast_reduction_report(
            reduction, found, "the fast path writes the reduced model (the full one needs "
            "the dense matrix)")
        reduced_summary(report["summary"], reduction)
        report["summary"]["sparsification_note"] = "reduced model"
        report["inductance"]["left_out"] = [{"what": w, "why": y} for w, y in LEFT_OUT[1:]]
        if not reduction.acceptable:
            m = reduction.model
            report["warnings"].append(
                f"the reduced model is {m.max_error:.2e} from the full network (tolerance "
                f"{m.tolerance:g}) after {len(found.steps)} exact solves"
                + ("" if reduction.passive else ", and is not passive as written")
                + ": check it against --inductance dense on a coarser mesh")
    written = write_netlist(network, None, reduction)
    return AugmentResult(written.netlist_bytes, report, network.node_names, network.branches,
                         written.inductor_names, network)


def augment_inputs(inputs: Inputs, *, min_coupling: float | None = None,
                   frequency: float | None = None, keep_segments: bool = False,
                   progress: Any = None, broadband: BroadbandOptions | None = None,
                   model: str = "auto", status: Any = None,
                   scheduler: Any = None) -> AugmentResult:
    """Extract and augment inputs already read (:mod:`parasite.pipeline`), on the dense
    path or, for inputs read with ``inductance`` ``fast``, the operator's
    (:func:`augment_fast`; ``progress`` then counts the near field's rows, and the loops
    through ``status``); an error of the copper that names no file names the routes file."""
    from parasite.errors import ExtractionError, ParasiteError
    from parasite.pipeline import extract, extract_fast

    try:
        options = AugmentOptions(min_coupling=min_coupling, keep_segments=keep_segments)
        if inputs.inductance == "fast":
            if broadband is not None:
                raise ExtractionError(
                    "broadband ladders are fitted per branch of the full model, which the "
                    "fast path does not write: use --inductance dense (coarsen the mesh)",
                    file=inputs.routes_path)
            fast = extract_fast(inputs, frequency=frequency, progress=progress)
            return augment_fast(fast, options, model, status=status, scheduler=scheduler)
        extraction = extract(inputs, frequency=frequency, progress=progress)
        return augment(extraction, options, broadband, model)
    except ParasiteError as exc:
        if exc.file is None:  # the copper is the routes file's: name it
            exc.file = inputs.routes_path
        raise


def augment_files(netlist_path: str, routes_path: str, *, min_coupling: float | None = None,
                  frequency: float | None = None, keep_segments: bool = False,
                  progress: Any = None, broadband: BroadbandOptions | None = None,
                  model: str = "auto", inductance: str = "dense", status: Any = None,
                  scheduler: Any = None) -> AugmentResult:
    """Read, extract and augment in one call (the library side of ``parasite augment``);
    ``netlist_path`` ``-`` reads standard input; ``inductance`` ``dense``, ``fast`` or
    ``auto`` (:func:`parasite.pipeline.check_size`)."""
    from parasite.pipeline import load_inputs

    return augment_inputs(load_inputs(netlist_path, routes_path, inductance),
                          min_coupling=min_coupling, frequency=frequency,
                          keep_segments=keep_segments, progress=progress, broadband=broadband,
                          model=model, status=status, scheduler=scheduler)


def augment_text(netlist: str | bytes, routes: str | bytes, *,
                 routes_format: Literal["toml", "json"] = "toml",
                 netlist_name: str = "<netlist>", routes_name: str = "<routes>",
                 include_dir: str | Path | None = None, min_coupling: float | None = None,
                 frequency: float | None = None, keep_segments: bool = False,
                 progress: Any = None, broadband: BroadbandOptions | None = None,
                 model: str = "auto") -> AugmentResult:
    """The augmented netlist and report of a netlist and a routes file given as
    text, no files needed. ``netlist_name`` and ``routes_name`` appear in error
    messages and in the report; ``.include`` and ``.lib`` paths are looked for
    in ``include_dir`` (default: the working folder). ``result.netlist_text``
    is the augmented netlist, ``result.report`` the JSON-ready report."""
    from parasite.pipeline import inputs_from_text

    inputs = inputs_from_text(netlist, routes, routes_format=routes_format,
                              netlist_name=netlist_name, routes_name=routes_name,
                              include_dir=include_dir)
    return augment_inputs(inputs, min_coupling=min_coupling, frequency=frequency,
                          keep_segments=keep_segments, progress=progress, broadband=broadband,
                          model=model)


def report_of(netlist: str | bytes, routes: str | bytes, *, fmt: str = "json",
                   table: str = "segments", **options: Any) -> str:
    """The report of :func:`augment_text` formatted as ``parasite report`` writes
    it: ``fmt`` ``json``, ``text`` or ``csv`` (with ``table`` ``segments``,
    ``couplings`` or ``loops``); ``options`` as for :func:`augment_text`."""
    from parasite.report import format_report

    return format_report(augment_text(netlist, routes, **options).report, fmt, table)
