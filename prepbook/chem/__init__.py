"""The pure chemistry and metrology core: no database, no terminal, no files.

formula         molar masses from formulas (CIAAW 2021 atomic weights via periodictable)
standardization normality from replicate titrations, direct and secondary (the facade)
stats           replicate statistics and Grubbs' outlier test (flags, never drops)
uncertainty     GUM budgets with the ``uncertainties`` library (EURACHEM/CITAC CG4)
corrections     water density (CIPM), air buoyancy (NIST IR 6969), temperature
preparation     masses and volumes to prepare, dilute or adjust a titrant; titer
trend           drift between standardizations and the factor's trend over time

Heavy libraries (numpy, scipy, uncertainties) are imported inside the functions that
need them, so importing this package stays fast.
"""
