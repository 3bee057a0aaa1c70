"""Probe leads in the copper graph (part of the graph builder,
:mod:`geometry.graph`): the contacts on the copper and the lead chains
from them to the instrument.
"""

from __future__ import annotations

import math

import numpy as np

from geometry.components import component_roots
from geometry.errors import RoutesError
from geometry.graph_base import (
    _State,
    _ViaPlan,
)
from geometry.model import (
    Node,
    PinNode,
    Point2,
    Segment,
)
from geometry.spatial import project


class _ProbeLeads(_State):
    """Probe contacts and leads."""

    def plan_probes(self, plans: list[_ViaPlan]) -> list[tuple[str, Point2 | str]]:
        """(net, target) of every probe contact, tip then ground of each probe in
        file order: the nearest copper on the contact's layer (a via joined
        there, or a trace's centre-line point, which splits the piece like a
        pin), restricted to the contact's ``net`` when it names one; on a plane
        layer, the plane."""
        r, P = self.r, self.P
        out: list[tuple[str, Point2 | str]] = []
        for pr in r.probes:
            for key, c in (("tip", pr.tip), ("ground", pr.ground)):
                la = r.layers[c.layer]
                where = (f"the {key} contact of probe {pr.name!r} at {self.fmt_pt(*c.at)} on "
                         f"layer {c.layer!r}")
                err_key = f"probe[{pr.index}].{key}.at"
                if la.plane is not None:
                    if c.net is not None and c.net != la.plane:
                        raise RoutesError(
                            f"{where} lies on the return plane of net {la.plane!r}, not on net "
                            f"{c.net!r}", file=r.path, line=pr.line, key=f"probe[{pr.index}].{key}.net")
                    out.append((la.plane, "plane"))
                    continue
                best: tuple[float, str, Point2] | None = None
                for v, plan in zip(r.vias, plans, strict=True):
                    for k, lay in enumerate(plan.layers):
                        target = plan.targets[k]
                        dv = math.dist(v.at, c.at)
                        if (lay.name == c.layer and isinstance(target, tuple)
                                and dv <= max(0.5 * v.diameter, self.snap)
                                and (c.net is None or v.net == c.net)
                                and (best is None or dv < best[0])):
                            best = (dv, v.net, target)
                lid = self.layer_id[c.layer]
                m = np.flatnonzero((P.layer == lid) if c.net is None else
                                   (P.layer == lid) & (P.net == self.net_id.get(c.net, -1)))
                hit: tuple[int, float, float] | None = None
                if len(m):
                    t, dp = project(np.full(len(m), c.at[0]), np.full(len(m), c.at[1]),
                                    P.ax[m], P.ay[m], P.bx[m], P.by[m])
                    inside = dp <= 0.5 * P.w[m] + self.snap
                    if inside.any():
                        k = int(np.flatnonzero(inside)[np.argmin(dp[inside])])
                        hit = (int(m[k]), float(np.clip(t[k], 0.0, 1.0)), float(dp[k]))
                if hit is not None and (best is None or hit[2] < best[0]):
                    net = self.nets[int(P.net[hit[0]])]
                    best = (hit[2], net, self.join_piece(hit[0], hit[1]))
                if best is None:
                    of = f" of net {c.net!r}" if c.net is not None else ""
                    raise RoutesError(
                        f"{where} lies on no copper{of}; a contact must lie on a trace (within "
                        f"half its width) or a via's pad on that layer", file=r.path,
                        line=pr.line, key=err_key)
                out.append((best[1], best[2]))
        return out

    def probe_leads(self, targets: list[tuple[str, Point2 | str]],
                    segs: list[dict[str, object]]) -> tuple[str, ...]:
        """The contact nodes and the lead segments of every probe (appended to
        ``segs``); returns the leads' nets, ``probe:<name>:tip`` and
        ``probe:<name>:ground`` (names that no netlist node can take: a lead
        is never joined to other copper than its contact)."""
        r, nodes = self.r, self.nodes
        nets: list[str] = []
        self.probe_contact_nodes: list[int] = []
        for n, pr in enumerate(r.probes):
            for j, (key, c, lead) in enumerate((("tip", pr.tip, pr.tip_lead),
                                                ("ground", pr.ground, pr.ground_lead))):
                net, target = targets[2 * n + j]
                la = r.layers[c.layer]
                if target == "plane":
                    first = self.plane_node(la, c.at)
                else:
                    assert isinstance(target, tuple)
                    first = nodes.at(net, la, target[0], target[1])
                self.probe_contact_nodes.append(first)
                lead_net = f"probe:{pr.name.lower()}:{key}"
                nets.append(lead_net)
                ids = [first] + [nodes.new(lead_net, p, None) for p in lead.points[1:]]
                for k in range(len(ids) - 1):
                    segs.append(dict(net=lead_net, kind="probe", layer=None,
                                     start=lead.points[k], end=lead.points[k + 1],
                                     width=2 * lead.radius, thickness=2 * lead.radius,
                                     radius=lead.radius, inner=0.0, n0=ids[k], n1=ids[k + 1],
                                     source=f"probe[{pr.index}].{key}_lead",
                                     name=f"{pr.name} {key} lead"))
        return tuple(nets)

    def check_probe_contacts(self, nodes: tuple[Node, ...], segments: list[Segment],
                             pins: list[PinNode]) -> None:
        """A contact must be on copper that a pin connects to the circuit (else its
        leads would float, outside the circuit)."""
        if not self.r.probes:
            return
        copper = [s for s in segments if s.kind != "probe"]
        roots = component_roots(len(nodes), [s.node_from for s in copper],
                                [s.node_to for s in copper]).tolist()

        def find(a: int) -> int:
            return roots[a]

        with_pin = {find(pn.node) for pn in pins}
        for n, pr in enumerate(self.r.probes):
            for j, key in enumerate(("tip", "ground")):
                node = self.probe_contact_nodes[2 * n + j]
                if find(node) not in with_pin:
                    raise RoutesError(
                        f"the {key} contact of probe {pr.name!r} lies on copper of net "
                        f"{nodes[node].net!r} that no pin connects to the circuit; put the "
                        f"contact on copper that carries the circuit's current", file=self.r.path,
                        line=pr.line, key=f"probe[{pr.index}].{key}.at")
