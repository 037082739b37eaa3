"""Ambervale Cryogenic Sensor Laboratory: sensor, readout and calibration routines.

An invented lab's in-house package, kept as the auditor's sample of legacy numerical code.
The modules grew over many years of thesis projects; most of them still run on the
1990s-era test stands in the dilution-refrigerator hall.

    thermometry  -- resistance thermometers, thermistors, noise thermometry
    decay        -- afterglow, membrane modes, substrate heating, hot-wire probes
    readout      -- lock-in / IQ readout, triggers, alignment, acquisition loops
    calibration  -- polynomial calibration fits and heat-load integrals
"""

__version__ = "3.4.1"
