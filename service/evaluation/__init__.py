"""PURE: material specification, the pass/fail evaluator with mix-up detection, library search."""
