"""The pipeline's stages, each a function of the stage before it (SPEC §2).

`correct` (radiometric correction and geometry of a view), `elements` (surface heat flux,
U with its interval), `risk` (fRsi limits and verdicts), `view` (defects and undisturbed
areas of one view), `series` (ISO 9869-1 night series), `heat` (verdicts, heat balance,
retrofit). Their results are the frozen dataclasses of `data`. `envelope.assess` calls
them in order.
"""
