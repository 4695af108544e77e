"""Presentation of results that are already computed: console tables (rich), figures
(matplotlib, headless) and the self-contained HTML report. Renders only; runs no stage.
"""
