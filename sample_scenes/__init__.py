"""The invented sample scenes, shipped with Skyloom as package data (scene files, their CSV
formation and meshes): ``importlib.resources.files("sample_scenes")`` is their folder, in a
checkout and after ``pip install .`` alike."""
