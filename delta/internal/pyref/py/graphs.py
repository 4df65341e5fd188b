# networkx and igraph references on graphs given as {"n", "directed", "edges"}.
import networkx
import igraph


def nx_graph(graph):
    g = networkx.DiGraph() if graph["directed"] else networkx.Graph()
    g.add_nodes_from(range(graph["n"]))
    g.add_edges_from(tuple(e) for e in graph["edges"])
    return g


def ig_graph(graph):
    return igraph.Graph(n=graph["n"], edges=[tuple(e) for e in graph["edges"]], directed=graph["directed"])


@ref("degrees")
def degrees(graph):
    g = nx_graph(graph)
    return [g.degree(x) for x in range(graph["n"])]


@ref("triangles")
def triangles(graph):
    t = networkx.triangles(nx_graph(graph))
    return [t[x] for x in range(graph["n"])]


@ref("motifs")
def motifs(graph, size):
    counts = ig_graph(graph).motifs_randesu(size=size)
    return [{"class": cls, "count": c,
             "edges": igraph.Graph.Isoclass(size, cls, directed=graph["directed"]).get_edgelist()}
            for cls, c in enumerate(counts)]


@ref("triadic_census")
def triadic_census(graph):
    census = networkx.triadic_census(nx_graph(graph))
    triads = {}
    for name in census:
        t = networkx.triad_graph(name)
        index = {v: i for i, v in enumerate(sorted(t.nodes()))}
        triads[name] = [[index[a], index[b]] for a, b in t.edges()]
    return {"counts": census, "triads": triads}


@ref("karate_club")
def karate_club():
    g = networkx.karate_club_graph()
    return {"n": g.number_of_nodes(), "directed": False, "edges": [[a, b] for a, b in g.edges()]}
