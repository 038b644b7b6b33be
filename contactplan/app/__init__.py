"""The desktop planner: the only package that imports Qt."""
