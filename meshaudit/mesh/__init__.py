"""Stage 1, the mesh: reading a file (or a meshio mesh) into element arrays, the file's own
element and node numbers, named regions, the plane each element is measured in, scaling
of extreme sizes, and the edge table the topology checks share."""
