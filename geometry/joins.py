"""Where vias and pins join the copper of their net (part of the graph builder,
:mod:`geometry.graph`): pairs of touching pieces, the layers a via joins and
the node a pin lands on, and the messages for a pin off its copper.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from geometry.errors import RoutesError
from geometry.graph_base import (
    _near_point,
    _State,
    _touching,
    _ViaPlan,
)
from geometry.model import (
    Pin,
    Point2,
)
from geometry.spatial import crossings, project, segment_distance


class _Joins(_State):
    """Via and pin planning."""

    def piece_pairs(self, i: np.ndarray, j: np.ndarray, length: np.ndarray,
                    overlap_seen: set[tuple[str, str]]) -> None:
        if len(i) == 0:
            return
        P, snap = self.P, self.snap
        same = P.net[i] == P.net[j]
        # T-junctions: an end of one piece on the other's centre line
        for s_idx, o_idx in ((i, j), (j, i)):
            for ex, ey in ((P.ax[o_idx], P.ay[o_idx]), (P.bx[o_idx], P.by[o_idx])):
                t, d = project(ex, ey, P.ax[s_idx], P.ay[s_idx], P.bx[s_idx], P.by[s_idx])
                L = length[s_idx]
                hit = same & (d <= snap) & (t * L > snap) & (t * L < L - snap)
                for k in np.flatnonzero(hit):
                    self.splits[int(s_idx[k])].append((float(ex[k]), float(ey[k])))
        # crossings of same-net centre lines
        s, u, ok = crossings(P.ax[i], P.ay[i], P.bx[i], P.by[i], P.ax[j], P.ay[j], P.bx[j], P.by[j])
        Li, Lj = length[i], length[j]
        hit = same & ok & (s * Li > snap) & (s * Li < Li - snap) & (u * Lj > snap) & (u * Lj < Lj - snap)
        for k in np.flatnonzero(hit):
            a, b = int(i[k]), int(j[k])
            x = float(P.ax[a] + s[k] * (P.bx[a] - P.ax[a]))
            y = float(P.ay[a] + s[k] * (P.by[a] - P.ay[a]))
            self.splits[a].append((x, y))
            self.splits[b].append((x, y))
        # overlapping copper of different nets
        diff = np.flatnonzero(~same)
        if len(diff):
            ia, ib = i[diff], j[diff]
            d = segment_distance(P.ax[ia], P.ay[ia], P.bx[ia], P.by[ia],
                                 P.ax[ib], P.ay[ib], P.bx[ib], P.by[ib])
            bad = d < 0.5 * (P.w[ia] + P.w[ib]) - snap
            for k in np.flatnonzero(bad):
                ta, tb = int(P.trace[ia[k]]), int(P.trace[ib[k]])
                key = (f"trace[{ta}]", f"trace[{tb}]")
                if key in overlap_seen:
                    continue
                overlap_seen.add(key)
                tra, trb = self.r.traces[ta], self.r.traces[tb]
                mx, my = _near_point(P, int(ia[k]), int(ib[k]))
                self.warn(key[0], tra.line,
                          f"copper of net {tra.net!r} overlaps copper of net {trb.net!r} "
                          f"({key[1]}) on layer {tra.layer!r} near {self.fmt_pt(mx, my)}")

    def plan_vias(self, plans: list[_ViaPlan], layer_pairs: dict, via_items: dict,
                  pin_items: dict, overlap_seen: set[tuple[str, str]]) -> None:
        r = self.r
        # candidate pieces and pins for each via item, from the per-layer pairs
        near_pieces: dict[tuple[int, int], list[int]] = {}
        near_pins: dict[tuple[int, int], list[int]] = {}
        near_vias: dict[tuple[int, int], list[int]] = {}
        for lid, own, other_kind, other in _touching(layer_pairs, 1):
            vit = via_items.get(lid, [])
            key = vit[own]
            if other_kind == 0:
                near_pieces.setdefault(key, []).append(other)
            elif other_kind == 2:
                near_pins.setdefault(key, []).append(pin_items.get(lid, [])[other])
            else:
                near_vias.setdefault(key, []).append(vit[other][0])
        for vi, (v, plan) in enumerate(zip(r.vias, plans, strict=True)):
            radius = 0.5 * v.diameter
            last = len(plan.layers) - 1
            for k, la in enumerate(plan.layers):
                end = k in (0, last)
                if la.plane is not None:
                    if la.plane == v.net:
                        plan.targets[k] = "plane"
                    elif end:
                        plan.targets[k] = v.at
                    continue
                lid = self.layer_id[la.name]
                cand = near_pieces.get((vi, k), [])
                hit = self.nearest_piece(v.net, lid, v.at[0], v.at[1], cand)
                if hit is not None:
                    plan.targets[k] = self.join_piece(hit[0], hit[1])
                elif end or any(
                    self.pin_nets[pi] == v.net
                    and math.dist(r.pins[pi].at, v.at) <= max(radius, self.snap)
                    for pi in near_pins.get((vi, k), [])
                ):
                    plan.targets[k] = v.at
                # copper of other nets touching the barrel on this layer
                P = self.P
                for pc in cand:
                    if P.net[pc] == self.net_id[v.net]:
                        continue
                    _, d = project(np.array([v.at[0]]), np.array([v.at[1]]), P.ax[pc:pc + 1],
                                   P.ay[pc:pc + 1], P.bx[pc:pc + 1], P.by[pc:pc + 1])
                    if d[0] < 0.5 * P.w[pc] + radius - self.snap:
                        tr = r.traces[int(P.trace[pc])]
                        key = (f"via[{vi}]", f"trace[{tr.index}]")
                        if key not in overlap_seen:
                            overlap_seen.add(key)
                            self.warn(key[0], v.line,
                                      f"the barrel of net {v.net!r} overlaps copper of net "
                                      f"{tr.net!r} ({key[1]}) on layer {la.name!r} at "
                                      f"{self.fmt_pt(*v.at)}")
                for other in near_vias.get((vi, k), []):
                    ov = r.vias[other]
                    if ov.net != v.net and other > vi and math.dist(ov.at, v.at) < (
                        radius + 0.5 * ov.diameter - self.snap
                    ):
                        key = (f"via[{vi}]", f"via[{other}]")
                        if key not in overlap_seen:
                            overlap_seen.add(key)
                            self.warn(key[0], v.line,
                                      f"the barrel of net {v.net!r} overlaps the barrel of net "
                                      f"{ov.net!r} ({key[1]}) at {self.fmt_pt(*v.at)}")
        # stacked vias: an inner layer where another via of the net is joined at `at`
        joined: dict[tuple[str, str], list[Point2]] = {}
        for v, plan in zip(r.vias, plans, strict=True):
            for la, target in zip(plan.layers, plan.targets, strict=True):
                if isinstance(target, tuple):
                    joined.setdefault((v.net, la.name), []).append(v.at)
        for v, plan in zip(r.vias, plans, strict=True):
            for k, la in enumerate(plan.layers):
                if plan.targets[k] is None and la.plane is None and any(
                    math.dist(p, v.at) <= self.snap for p in joined.get((v.net, la.name), [])
                ):
                    plan.targets[k] = v.at

    def plan_pins(self, layer_pairs: dict, via_items: dict, pin_items: dict,
                  plans: list[_ViaPlan]) -> list[Point2 | str]:
        r = self.r
        near_pieces: dict[int, list[int]] = {}
        near_vias: dict[int, list[tuple[int, int]]] = {}
        for lid, own, other_kind, other in _touching(layer_pairs, 2):
            pi = pin_items.get(lid, [])[own]
            if other_kind == 0:
                near_pieces.setdefault(pi, []).append(other)
            elif other_kind == 1:
                near_vias.setdefault(pi, []).append(via_items.get(lid, [])[other])
        targets: list[Point2 | str] = []
        for pi, (p, net) in enumerate(zip(r.pins, self.pin_nets, strict=True)):
            la = r.layers[p.layer]
            if la.plane is not None:
                if la.plane != net:
                    raise self.pin_error(
                        p, f"pin {p.terminal!r} is on net {net!r} (its terminal's node in the "
                           f"netlist) but lies on layer {p.layer!r}, the return plane of net "
                           f"{la.plane!r}; place it on copper of net {net!r}")
                targets.append("plane")
                continue
            lid = self.layer_id[p.layer]
            best: tuple[float, Point2] | None = None
            for vi, k in near_vias.get(pi, []):
                v = r.vias[vi]
                target = plans[vi].targets[k]
                d = math.dist(v.at, p.at)
                if v.net == net and isinstance(target, tuple) and d <= max(0.5 * v.diameter,
                                                                           self.snap):
                    if best is None or d < best[0]:
                        best = (d, target)
            hit = self.nearest_piece(net, lid, p.at[0], p.at[1], near_pieces.get(pi, []))
            if hit is not None and (best is None or hit[2] < best[0]):
                best = (hit[2], self.join_piece(hit[0], hit[1]))
            if best is None:
                raise self.off_copper(p, net, near_pieces.get(pi, []), near_vias.get(pi, []), plans)
            targets.append(best[1])
        return targets

    def off_copper(self, p: Pin, net: str, pieces: Sequence[int],
                   vias: Sequence[tuple[int, int]], plans: list[_ViaPlan]) -> RoutesError:
        """The error for a pin that lies on no copper of its net."""
        r, P = self.r, self.P
        where = f"pin {p.terminal!r} at {self.fmt_pt(*p.at)} on layer {p.layer!r}"
        # copper of another net under the pin?
        others: list[str] = []
        for pc in pieces:
            _, d = project(np.array([p.at[0]]), np.array([p.at[1]]), P.ax[pc:pc + 1],
                           P.ay[pc:pc + 1], P.bx[pc:pc + 1], P.by[pc:pc + 1])
            if d[0] <= 0.5 * P.w[pc] + self.snap:
                tr = r.traces[int(P.trace[pc])]
                others.append(f"net {tr.net!r} (trace[{tr.index}])")
        for vi, _k in vias:
            v = r.vias[vi]
            if math.dist(v.at, p.at) <= max(0.5 * v.diameter, self.snap):
                others.append(f"net {v.net!r} (via[{vi}])")
        nearest = self.nearest_copper(net, p)
        if others:
            return self.pin_error(
                p, f"{where} lies on copper of {others[0]}, but its terminal is on net {net!r} "
                   f"in the netlist; {nearest}")
        return self.pin_error(p, f"{where} lies on no copper of its net {net!r}; {nearest}")

    def nearest_copper(self, net: str, p: Pin) -> str:
        r, P = self.r, self.P
        if net not in self.net_id:
            return f"net {net!r} has no copper in this routes file"
        cands: list[tuple[float, str]] = []
        m = np.flatnonzero(P.net == self.net_id[net])
        if len(m):
            _, d = project(np.full(len(m), p.at[0]), np.full(len(m), p.at[1]),
                           P.ax[m], P.ay[m], P.bx[m], P.by[m])
            k = int(np.argmin(d))
            pc = int(m[k])
            tr = r.traces[int(P.trace[pc])]
            edge = max(float(d[k]) - 0.5 * tr.width, 0.0)
            cands.append((edge, f"trace[{tr.index}] on layer {tr.layer!r}, its centre line "
                                f"{self.fmt_len(float(d[k]))} away (its edge "
                                f"{self.fmt_len(edge)})"))
        for v in r.vias:
            if v.net == net:
                dv = math.dist(v.at, p.at)
                cands.append((max(dv - 0.5 * v.diameter, 0.0),
                              f"via[{v.index}] at {self.fmt_pt(*v.at)}, {self.fmt_len(dv)} away"))
        for name in self.plane_layer_of_net.get(net, []):
            cands.append((math.inf, f"the plane on layer {name!r}"))
        cands.sort(key=lambda c: c[0])
        return f"the nearest copper of net {net!r} is {cands[0][1]}"
