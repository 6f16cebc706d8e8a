"""What a loading must respect: CG envelopes, mass/inertia/CG-offset limits, MAC, the check, solvers.

May import: core.document, core.physics, core.loading, core.control, core's foundations.
"""
