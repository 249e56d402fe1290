"""``femheat mesh CASE [--out DIR]``: mesh the part only, report its figures, draw its faces.

Prints the node and element counts, the smallest element quality and the range of element
angles, and writes ``mesh.png`` (the mesh with each face coloured by name and labelled with
its condition) into the folder.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["add_parser", "run"]

_PLURAL = {"triangle": "triangles", "tetrahedron": "tetrahedra"}


def add_parser(sub) -> None:
    """Register the ``mesh`` command on the CLI's subparsers."""
    m = sub.add_parser("mesh", help="mesh a case's part only: counts, quality and a picture")
    m.add_argument("case", help="case file (TOML)")
    m.add_argument("--out", help="folder for mesh.png (default: <case name>_mesh)")


def run(args, console) -> int:
    """Mesh the case's part, print its figures and write the picture; returns 0."""
    from .case import load_case
    from .cli import _writable
    from .output.meshinfo import face_labels, mesh_figures
    from .output.render import render_faces
    from .problem import build_problem

    case = load_case(args.case)
    out = Path(args.out) if args.out else Path(f"{Path(args.case).stem}_mesh")
    _writable(out)
    problem = build_problem(case)
    mesh = problem.model.geometry  # for P2 the elements, not their split node mesh
    fig = mesh_figures(mesh)
    console.print(f"[bold]{problem.title or 'case'}[/bold]: {problem.part_model} {problem.shape}")
    console.print(
        f"  mesh: {fig['nodes']:,} nodes, {fig['cells']:,} {_PLURAL[fig['element']]}, "
        f"element size {1000 * fig['size_m']:.3g} mm"
    )
    if problem.model.element == "P2":
        edges = "on the geometry" if mesh.curved_edges is not None else "at edge midpoints"
        console.print(
            f"  second-order (P2) elements, edge nodes {edges}: {problem.mesh.nodes:,} nodes "
            "in all"
        )
    console.print(f"  smallest element quality: {fig['min_quality']:.3f} (1 = equilateral)")
    console.print(
        f"  element angles ({fig['angle_kind']}): {fig['min_angle_deg']:.1f} to "
        f"{fig['max_angle_deg']:.1f} degrees"
    )
    labels = face_labels(problem)
    console.print("  faces: " + ", ".join(labels[n] for n in mesh.face_names), markup=False)
    path = render_faces(out / "mesh.png", mesh, labels)
    console.print(f"  picture: {path}")
    return 0
