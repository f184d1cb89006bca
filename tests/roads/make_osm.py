"""Write a small hand-made OpenStreetMap extract as .osm.pbf with pyosmium (for tests/roads.rs).

usage: make_osm.py SPEC.json OUT.osm.pbf   SPEC: {"nodes": [[id, lon, lat], ...],
                                                  "ways": [[id, [node ids], {tags}], ...]}
"""
import json
import sys

import osmium

spec = json.load(open(sys.argv[1]))
meta = dict(version=1, changeset=1, uid=1, user="hostcut-test", timestamp="2026-01-01T00:00:00Z")
writer = osmium.SimpleWriter(sys.argv[2])
for node_id, lon, lat in spec["nodes"]:
    writer.add_node(osmium.osm.mutable.Node(id=node_id, location=(lon, lat), tags={}, **meta))
for way_id, refs, tags in spec["ways"]:
    writer.add_way(osmium.osm.mutable.Way(id=way_id, nodes=refs, tags=tags, **meta))
writer.close()
