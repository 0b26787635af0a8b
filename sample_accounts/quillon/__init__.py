"""The modules of the Quillon demo generator (run ``sample_accounts/generate.py``)."""
