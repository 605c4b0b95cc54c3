"""Quick text plots (moved to `heronframe.viz` in 3.0)."""


def scatter_grid(table, x, y, width=40, height=12):
    """A character grid with one `*` per row of `table` at (x, y)."""
    points = [(float(row[x]), float(row[y])) for row in table.rows()]
    grid = [[" "] * width for _ in range(height)]
    if points:
        xs, ys = [p[0] for p in points], [p[1] for p in points]
        x_span, y_span = (max(xs) - min(xs)) or 1.0, (max(ys) - min(ys)) or 1.0
        for px, py in points:
            col = int((px - min(xs)) / x_span * (width - 1))
            line = int((py - min(ys)) / y_span * (height - 1))
            grid[height - 1 - line][col] = "*"
    return "\n".join("".join(cells) for cells in grid)
