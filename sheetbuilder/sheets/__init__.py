"""The planners: one module per sheet, each pure (frames and settings in, a spec.Sheet out).
"""
