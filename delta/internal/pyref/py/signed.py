# networkx references on signed graphs: edge attribute "sign" is +1 or -1.


def nx_signed(graph):
    g = nx_graph(graph)
    for (a, b), neg in zip(graph["edges"], graph.get("neg") or [False] * len(graph["edges"])):
        g[a][b]["sign"] = -1 if neg else 1
    return g


@ref("signed_triangles")
def signed_triangles(graph):
    # Per node: positive degree, negative degree, and the triangles at the
    # node that are balanced (an even number of negative edges; Heider
    # 1946, Cartwright & Harary 1956) and unbalanced, from the triangles
    # networkx.enumerate_all_cliques lists (cliques of size 3).
    g = nx_signed(graph)
    out = [[0, 0, 0, 0] for _ in range(graph["n"])]
    for a, b, d in g.edges(data=True):
        col = 1 if d["sign"] < 0 else 0
        out[a][col] += 1
        out[b][col] += 1
    for clique in networkx.enumerate_all_cliques(g):
        if len(clique) < 3:
            continue
        if len(clique) > 3:
            break
        x, y, z = clique
        neg = sum(1 for a, b in ((x, y), (y, z), (x, z)) if g[a][b]["sign"] < 0)
        col = 2 if neg % 2 == 0 else 3
        for v in clique:
            out[v][col] += 1
    return out
