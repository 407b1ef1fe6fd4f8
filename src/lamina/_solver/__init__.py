"""The steps of :func:`lamina.solve`, one module each, on numpy arrays.

:mod:`lamina.solve` is the driver; it reads like the method. Over the whole problem:

    check    options.check_options            options, geometry, output positions
             thermal_sources.planck_sources   Planck radiance at the levels and the surface
             surface_terms.surface_arrays     a bidirectional surface's BRDF terms and
                                              emissivities for the kernel (surface=)
    plan     blocks.plan_blocks               which arrays go to each block, with which dims
    apply    xarray.apply_ufunc over blocks   (dask: one call per chunk of columns)
    describe outputs.assemble                 the Dataset: names, units, CF attributes,
                                              derived outputs (net flux, heating rate)

and, inside each block of columns (numpy in, numpy out):

    prepare  blocks.prepare_block             broadcast, check lazy values, trim moments
    scale    scaling.scale_layers             delta-M (Wiscombe 1977), backward-peak rule
    solve    kernel_call.solve_block          the Cython kernel; SolverError on failure
    correct  corrections.unscale_direct_beam  the direct beam reported unscaled
             corrections.correct_radiance     exact single scattering, aureole
                                              (Nakajima and Tanaka 1988)
    pack     blocks.pack_block                back to the block's leading axes

Rooms import downward only: every step module imports :mod:`lamina._solver.common` (the
error type, constants, private dim names, the records passed between steps and the geometry
helpers) and library modules (:mod:`lamina.phase`, :mod:`lamina.planck`,
:mod:`lamina._kernel`, ...), never another step. Only the drivers import the steps:
:mod:`lamina.solve`, and :mod:`lamina.prepared`, whose :class:`~lamina.Solver` checks the
options once and runs the block steps on numpy arrays (no apply and no describe step).
"""
