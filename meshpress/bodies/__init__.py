"""Bodies: reading a surface mesh and cleaning it into the vehicle frame.

In: a mesh file (STL, OBJ, PLY, GLB, VTK, ... through trimesh and meshio) in any unit and axes, or arrays.
Out: :class:`~meshpress.bodies.body.Body`, a watertight-or-reported, outward-wound triangle surface in metres in
the vehicle frame (x rearward, y right, z up), with its face areas, normals, axles and a
:class:`~meshpress.bodies.diagnostics.MeshReport`; plus what later stages need from the shape alone: surface
distances (heat method), a simplified working copy of big meshes, face regions, and the closed-form and sample
bodies that tests, benchmarks and the demo are built on.
"""
