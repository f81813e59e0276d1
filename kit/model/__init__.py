"""The model layer: code generation, its cache, designs, the exact solve and compliance.

Looks down only (topologies, circuit, devices, base); see DEVELOPERS.md.
"""
