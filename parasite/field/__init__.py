"""Fields of the copper's currents: magnetic near field (Biot-Savart), the
magnetic dipole moment and a small-loop radiated-field estimate, and the
mutual inductance between loops from their segment currents.

SI units throughout (m, A, T, H, V/m). Estimates for comparing layouts, not
compliance results (docs/field.md).

Public API::

    segment_field(points, arrays, currents, *, images=True) -> (P, 3) T
    field_map(arrays, currents, z, *, nx=100, ny=100, extent=None, images=True) -> FieldMap
    height_plane(arrays, height, *, below=False) -> z (m)
    copper_extent(arrays, margin=2e-3) -> (xmin, xmax, ymin, ymax) m
    dipole_moment(start, end, currents, origin=None) -> DipoleMoment
    image_dipole(start, end, currents, mirror_z, origin=None) -> DipoleMoment
    small_loop_field(moment, frequency, distance, *, reflection=1.0, size=None) -> RadiatedEstimate
    coupling_matrix(L, currents) -> CouplingMatrix
    loop_coupling(L, i_a, i_b) -> LoopCoupling
    mutual_impedance(L, R, i_victim, i_aggressor, frequency) -> complex ohm
    induced_voltage(mutual, didt) -> V
"""

from parasite.field.biot_savart import filament_kernel, segment_field
from parasite.field.dipole import (
    DipoleMoment,
    RadiatedEstimate,
    dipole_moment,
    image_dipole,
    small_loop_field,
)
from parasite.field.mutual import (
    CouplingMatrix,
    LoopCoupling,
    coupling_matrix,
    induced_voltage,
    loop_coupling,
    mutual_impedance,
)
from parasite.field.nearmap import FieldMap, copper_extent, field_map, height_plane

__all__ = [
    "CouplingMatrix", "DipoleMoment", "FieldMap", "LoopCoupling", "RadiatedEstimate",
    "copper_extent", "coupling_matrix", "dipole_moment", "field_map", "filament_kernel",
    "height_plane", "image_dipole", "induced_voltage", "loop_coupling", "mutual_impedance",
    "segment_field", "small_loop_field",
]
