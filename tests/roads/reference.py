"""Outside reference for tests/roads.rs: shortest road travel by networkx on a GDAL-read layer.

Reads the road layer with GDAL's Python bindings (osgeo.ogr), reprojects it with osgeo.osr,
builds a networkx DiGraph keyed by exact vertex coordinates, inserts each stop on its nearest
road piece (found by brute force over every piece), and runs networkx's Dijkstra for every
ordered pair. Written independently of src/field/network.rs; it shares only the rules stated in
that module's doc (speed: layer's own > class; walk at a stated speed each way; one-way values).

usage: reference.py REQUEST.json  (prints a JSON answer on stdout)
"""
import json
import math
import sys

import networkx as nx
from osgeo import ogr, osr

ogr.UseExceptions()
osr.UseExceptions()


def other_tag(tags, key):
    # GDAL's OSM `other_tags`: "k"=>"v","k2"=>"v2" (values here never hold quotes).
    if not tags:
        return None
    for pair in tags.split('","'):
        k, _, v = pair.strip('"').partition('"=>"')
        if k == key:
            return v
    return None


def main():
    req = json.load(open(sys.argv[1]))
    ds = ogr.Open(req["path"])
    layer = ds.GetLayerByName(req["layer"]) if req.get("layer") else ds.GetLayer(0)
    src = layer.GetSpatialRef().Clone()
    src.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER)
    dst = osr.SpatialReference()
    dst.ImportFromEPSG(req["epsg"])
    dst.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER)
    ct = osr.CoordinateTransformation(src, dst)
    speeds = req["speeds"]  # class -> km/h, or null for not drivable
    default = req["default_kmh"]
    names = [layer.GetLayerDefn().GetFieldDefn(i).GetName() for i in range(layer.GetLayerDefn().GetFieldCount())]

    def attr(feature, key):
        if key in names:
            v = feature.GetField(key)
            return None if v is None else str(v)
        if "other_tags" in names:
            return other_tag(feature.GetField("other_tags"), key)
        return None

    g = nx.DiGraph()
    pieces = []  # (a, b, metres, hours_ab or None, hours_ba or None)

    def add(u, v, hours, km):
        if g.has_edge(u, v) and g[u][v]["hours"] <= hours:
            return
        g.add_edge(u, v, hours=hours, km=km)

    for feature in layer:
        cls = (attr(feature, "highway") or "").strip().lower()
        kmh = speeds.get(cls, default)
        if kmh is None:
            continue
        own = attr(feature, "maxspeed")
        if own:
            kmh = float(own)
        ow = (attr(feature, "oneway") or "").strip().lower()
        fwd = ow not in ("-1",)
        bwd = ow not in ("yes", "1", "true")
        geom = feature.GetGeometryRef().Clone()
        geom.Transform(ct)
        parts = [geom] if geom.GetGeometryCount() == 0 else [geom.GetGeometryRef(k) for k in range(geom.GetGeometryCount())]
        for part in parts:
            pts = [(part.GetX(k), part.GetY(k)) for k in range(part.GetPointCount())]
            for a, b in zip(pts, pts[1:]):
                m = math.dist(a, b)
                h = m / (kmh * 1000.0)
                g.add_node(a)
                g.add_node(b)
                if fwd:
                    add(a, b, h, m / 1000.0)
                if bwd:
                    add(b, a, h, m / 1000.0)
                pieces.append((a, b, m, h if fwd else None, h if bwd else None))

    components = nx.number_weakly_connected_components(g)

    # Snap each stop to the nearest piece (brute force) and split the pieces at the stops.
    on_piece = {}
    stops = []
    walks = []
    for k, (px, py) in enumerate(req["points"]):
        best = None
        for idx, (a, b, m, _, _) in enumerate(pieces):
            t = ((px - a[0]) * (b[0] - a[0]) + (py - a[1]) * (b[1] - a[1])) / (m * m)
            t = min(1.0, max(0.0, t))
            q = (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]))
            d = math.dist((px, py), q)
            if best is None or d < best[0]:
                best = (d, idx, t)
        d, idx, t = best
        walks.append(d)
        a, b, m = pieces[idx][:3]
        if t * m <= 1e-6:
            stops.append(a)
        elif m - t * m <= 1e-6:
            stops.append(b)
        else:
            node = ("stop", k)
            stops.append(node)
            on_piece.setdefault(idx, []).append((t, node))
    for idx, along in on_piece.items():
        a, b, m, hab, hba = pieces[idx]
        if g.has_edge(a, b):
            g.remove_edge(a, b)
        if g.has_edge(b, a):
            g.remove_edge(b, a)
        chain = [(0.0, a)] + sorted(along) + [(1.0, b)]
        for (t0, n0), (t1, n1) in zip(chain, chain[1:]):
            share = t1 - t0
            if hab is not None:
                add(n0, n1, share * hab, share * m / 1000.0)
            if hba is not None:
                add(n1, n0, share * hba, share * m / 1000.0)

    walk_kmh = req["walk_kmh"]
    n = len(stops)
    hours = [[None] * n for _ in range(n)]
    km = [[None] * n for _ in range(n)]
    for i in range(n):
        dist, paths = nx.single_source_dijkstra(g, stops[i], weight="hours")
        for j in range(n):
            if i == j:
                hours[i][j] = 0.0
                km[i][j] = 0.0
            elif stops[j] in dist:
                path = paths[stops[j]]
                hours[i][j] = walks[i] / (walk_kmh * 1000.0) + dist[stops[j]] + walks[j] / (walk_kmh * 1000.0)
                km[i][j] = sum(g[u][v]["km"] for u, v in zip(path, path[1:]))
    json.dump({"hours": hours, "km": km, "walk_m": walks, "components": components,
               "networkx": nx.__version__}, sys.stdout)


main()
