"""(filled in by its module docstrings)"""
