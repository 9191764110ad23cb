"""``bearbound preview``: the model a case file describes, drawn before anything is solved.

Case -> the planned domain (solver.mesh.plan_domain, as a run starts from) -> optionally
the lower bound's first mesh -> the model picture (solver.pictures.model_figure) -> PNG
bytes. Nothing is solved: a preview takes a second or two, and shows the layers with their
names and parameters, the ground profile (a slope's crest and toe), the water table, the
footing with its load and the extent of the model, so that a slip in the case file shows
before minutes of solving.
"""
from __future__ import annotations

from .export import BoundFields
from .model import Case

PREVIEW_TITLE = "Preview of the model, not solved"


def preview_png(case: Case, *, mesh: bool = False) -> bytes:
    """The model picture of ``case`` (:func:`preview_figure`) as PNG bytes."""
    from .pictures import figure_bytes

    return figure_bytes(preview_figure(case, mesh=mesh), "png")


def preview_figure(case: Case, *, mesh: bool = False):
    """The model picture of ``case``, nothing solved. ``mesh``: mesh it as a run's first step
    meshes the lower bound ([analysis] elements triangles) and draw the mesh too. A drawn
    site ([geometry]) is always meshed, for its outline; its mesh lines only with ``mesh``."""
    from .analysis import domain_record
    from .mesh import build_mesh, plan_domain
    from .pictures import model_figure

    domain = plan_domain(case)
    fields = None
    if mesh or case.geometry is not None:
        built = build_mesh(case, order=1, elements=case.analysis.elements, domain=domain)
        fields = BoundFields("lower", built.points, built.triangles, built.layer)
    return model_figure(case, domain_record(domain, [domain]), fields, None, show_mesh=mesh, title=PREVIEW_TITLE)
