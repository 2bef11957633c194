"""What judges a material in its place: one sample against its band, its base soil
and the filter criteria (:mod:`~tamis.project.evaluate`), a zone sequence
(:mod:`~tamis.project.zones`) and a designed filter band
(:mod:`~tamis.project.design_band`).

Built on :mod:`tamis.criteria` and :mod:`tamis.lab`; imports nothing above them.
"""
