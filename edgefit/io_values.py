"""The last stage of the reader: from a table's columns to spectra. The x unit from the header
or the values, the quantity and its scale (fraction, percent, cm⁻¹), the checks of values no
measurement gives, the order of x and the averaging of duplicates. A mixin of
:class:`edgefit.io._Parser` (it needs ``_err``, ``warnings``, ``name``, ``sha256``,
``header_line`` and ``x_label``)."""
from __future__ import annotations

import numpy as np

from .io_words import _fmt, _norm, _per_cm_factor, _quantity_of, _x_kind
from .optics import energy_ev_from, kubelka_munk_inverse
from .spectrum import QUANTITIES, X_UNITS, Spectrum

#: Fewest data points a spectrum may have.
MIN_POINTS = 5


class _Values:
    """Columns to spectra (see the module docstring)."""

    def _x_unit(self, override, name, label, x, rows):
        """(unit, factor) with the x values to be multiplied by factor."""
        options = "--x-unit " + "|".join(X_UNITS)
        finite = x[np.isfinite(x)]
        if finite.size == 0:
            raise self._err("the x column holds no numbers", column=label, fix="check the file")
        lo, hi = float(finite.min()), float(finite.max())
        bad = np.flatnonzero(~(x > 0) & np.isfinite(x))
        if bad.size:
            raise self._err(f"x value {_fmt(x[bad[0]])} is not positive",
                            line=int(rows[bad[0]]) + 1,
                            column=label, fix="correct or delete the row")
        if override:
            return override, 1.0
        kind = _x_kind(name) if name else None
        span = f"values {_fmt(lo)}..{_fmt(hi)}"
        if kind in ("nm", "um", "ev", "cm-1"):
            unit, factor = kind, 1.0
        elif kind == "angstrom":
            self.warnings.append("x read in Å and converted to nm")
            unit, factor = "nm", 0.1
        elif kind == "mev":
            self.warnings.append("x read in meV and converted to eV")
            unit, factor = "ev", 1e-3
        elif kind == "wavelength":
            if lo >= 50:
                unit, factor = "nm", 1.0
            elif hi <= 30:
                unit, factor = "um", 1.0
            else:
                raise self._err(f"the wavelength column has no unit and its {span} fit neither"
                                " nm nor µm", line=self.header_line, column=label, fix=options,
                                code="needs-option")
        elif kind == "energy":
            if 0.01 <= lo and hi <= 30:
                unit, factor = "ev", 1.0
            else:
                raise self._err(f"the energy column has no unit and its {span} do not look like"
                                " eV", line=self.header_line, column=label, fix=options,
                                code="needs-option")
        else:
            where = f"'{name}'" if name else "(no header)"
            if lo >= 150 and hi <= 3500:
                unit, factor = "nm", 1.0
                self.warnings.append(f"the x column {where} names no unit; its {span} read as "
                                     "nm (pass --x-unit to say otherwise)")
            else:
                guess = ("µm or eV" if hi <= 30 else "nm or cm-1" if lo >= 50 else "several units")
                raise self._err(f"cannot tell the unit of the x column {where}: its {span} "
                                f"could be {guess}", line=self.header_line, column=label,
                                fix=options, code="needs-option")
        with np.errstate(all="ignore"):     # x = 1e-320: the spectrum's own check names it
            e = energy_ev_from(np.array([lo, hi]) * factor, unit)
        if not (0.05 <= e.min() and e.max() <= 50):
            self.warnings.append(f"x {span} in {unit} are photon energies "
                                 f"{_fmt(e.min())}..{_fmt(e.max())} eV, unusual for an "
                                 "absorption edge; pass --x-unit if the unit is wrong")
        return unit, factor

    def _check_magnitudes(self, xv, yv, xunit, label, line_of):
        """No value beyond ±1e30 (no measurement is; the analysis would overflow) and no x
        without a finite photon energy (x = 1e-320 nm)."""
        big = np.flatnonzero(np.abs(yv) > 1e30)
        if big.size:
            k = int(big[0])
            raise self._err(f"the value {_fmt(float(yv[k]))} is not a plausible measurement",
                            line=int(line_of[k]) + 1, column=label,
                            fix="correct or delete the row")
        with np.errstate(all="ignore"):
            energy = energy_ev_from(xv, xunit)
        bad = np.flatnonzero(~(np.isfinite(energy) & (energy > 0)) | (np.abs(xv) > 1e30))
        if bad.size:
            k = int(bad[0])
            raise self._err(f"the x value {_fmt(float(xv[k]))} {xunit} gives no finite photon "
                            "energy", line=int(line_of[k]) + 1, column=self.x_label,
                            fix="correct or delete the row, or pass --x-unit if the unit is wrong")

    def _check_absorbance(self, yv, label, line_of):
        """Decadic absorbance of a measurement lies within about −1..10: below −10 the sample
        would pass 10¹⁰ times the light it receives; a tenth of the points above 15 is another
        quantity (an absorption coefficient read as absorbance)."""
        low = np.flatnonzero(yv < -10)
        high = yv > 15
        if low.size or high.sum() >= max(1, 0.1 * yv.size):
            k = int(low[0]) if low.size else int(np.flatnonzero(high)[0])
            raise self._err(f"the absorbance {_fmt(float(yv[k]))} is not a measured absorbance "
                            f"(values {_fmt(float(np.min(yv)))}..{_fmt(float(np.max(yv)))})",
                            line=int(line_of[k]) + 1, column=label,
                            fix="check the column; if it holds an absorption coefficient, pass "
                                "--quantity absorption-coefficient")

    def _check_fraction(self, yv, yu, q, label, line_of):
        """A T, R or diffuse R column must hold values of 0..1 (0..100 %): not all ≤ 0, and not
        mostly far above 1 (150 %, the limit the film analysis also applies). Returns the
        warning for values a little above 1 (105 %), or None."""
        if np.max(yv) <= 0 and np.min(yv) < 0:
            raise self._err(f"every {q} value in column '{label}' is zero or negative (up to "
                            f"{_fmt(float(np.max(yv)))}); a {q} lies between 0 and 1 (0 and "
                            "100 %)", column=label,
                            fix="check the baseline or dark correction of the measurement and "
                                "export it again; if the column is absorbance, pass --quantity "
                                "absorbance")
        scale = 100.0 if yu == "percent" else 1.0
        over = yv > 1.5 * scale
        if over.sum() >= max(1, 0.1 * yv.size):
            k = int(np.flatnonzero(over)[0])
            unit = " %" if yu == "percent" else ""
            raise self._err(f"{int(over.sum())} of {yv.size} {q} values in column '{label}' "
                            f"exceed {_fmt(150 if scale == 100 else 1.5)}{unit} (up to "
                            f"{_fmt(float(np.max(yv)))}{unit}): a {q} cannot be much above "
                            f"{'100 %' if scale == 100 else '1'}", line=int(line_of[k]) + 1,
                            column=label,
                            fix="check that the column holds the measured ratio (not detector "
                                "counts, a reference scan or a quantity in other units); pass "
                                "--quantity if it holds another quantity")
        above = np.flatnonzero(yv > 1.05 * scale)
        if above.size:
            unit = " %" if yu == "percent" else ""
            return (f"column '{label}' holds {above.size} {q} value"
                    f"{'s' if above.size > 1 else ''} above {'105 %' if scale == 100 else '1.05'}"
                    f" (up to {_fmt(float(np.max(yv)))}{unit}, first at line "
                    f"{int(line_of[above[0]]) + 1}): check the reference (100 %) scan of the "
                    "measurement")
        return None

    def _one(self, y, x, rows, xunit, xfactor, name, label, quantity, y_unit, meta, sample):
        warnings = list(self.warnings)
        q_options = "--quantity " + "|".join(QUANTITIES)
        if quantity is None:
            q, reason = _quantity_of(name) if name else (None, "the column has no header")
            if q is None:
                raise self._err(f"cannot tell what this column holds: {reason}",
                                line=self.header_line, column=label, fix=q_options,
                                code="needs-option")
        else:
            q = quantity
        keep = np.isfinite(x) & np.isfinite(y)
        dropped = np.flatnonzero(~keep)
        if dropped.size:
            warnings.append(f"dropped {dropped.size} point{'s' if dropped.size > 1 else ''} "
                            f"with a missing value in column '{label}' (first at line "
                            f"{int(rows[dropped[0]]) + 1})")
        xv, yv = x[keep] * xfactor, y[keep]
        line_of = np.asarray(rows)[keep]
        if xv.size < MIN_POINTS:
            raise self._err(f"only {xv.size} data point{'s' if xv.size != 1 else ''} in column "
                            f"'{label}'; at least {MIN_POINTS} are needed",
                            fix="export the whole spectrum")
        self._check_magnitudes(xv, yv, xunit, label, line_of)
        # Scale of the values.
        n = _norm(name)
        if q == "km":
            yu = "fraction"
            if np.any(yv < 0):
                k = int(np.flatnonzero(yv < 0)[0])
                raise self._err("a Kubelka–Munk value F(R) is negative", line=int(line_of[k]) + 1,
                                column=label, fix="correct the row or export R instead")
            yv = kubelka_munk_inverse(yv)
            q = "diffuse-reflectance"
            warnings.append(f"column '{label}' holds the Kubelka–Munk function F(R); converted "
                            "to diffuse reflectance R∞ = 1 + F − √(F² + 2F)")
            if y_unit:
                raise self._err("--y-unit does not apply to a Kubelka–Munk column",
                                column=label, fix="leave out --y-unit", code="bad-option")
        elif q in ("transmittance", "reflectance", "diffuse-reflectance"):
            hi = float(np.max(yv))
            if y_unit:
                yu = y_unit
            elif "%" in n or "percent" in n:
                yu = "percent"
                if hi <= 1.0:
                    warnings.append(f"column '{label}' is marked as percent but no value exceeds"
                                    " 1 %; if they are fractions pass --y-unit fraction")
            elif hi > 1.5:
                yu = "percent"
            elif hi <= 1.05:
                yu = "fraction"
            else:
                raise self._err(f"cannot tell whether the values (up to {_fmt(hi)}) are "
                                "fractions or percent", line=self.header_line, column=label,
                                fix="--y-unit fraction or --y-unit percent",
                                code="needs-option")
            above_one = self._check_fraction(yv, yu, q, label, line_of)
            if above_one:
                warnings.append(above_one)
        elif y_unit:
            raise self._err(f"--y-unit applies to transmittance and reflectance, not to {q}",
                            column=label, fix="leave out --y-unit", code="bad-option")
        elif q == "absorbance":
            yu = "absorbance"
            self._check_absorbance(yv, label, line_of)
        else:
            yu = "per_cm"
            factor = _per_cm_factor(name) if name else None
            if factor is None:
                factor = 1.0
                warnings.append(f"column '{label}' gives no unit for the absorption "
                                "coefficient; read as cm⁻¹")
            elif factor != 1.0:
                yv = yv * factor
                warnings.append(f"column '{label}' converted to cm⁻¹ (×{_fmt(factor)})")
        # Ascending x; duplicates averaged.
        order = np.argsort(xv, kind="stable")
        xs, ys = xv[order], yv[order]
        if np.any(xs[1:] == xs[:-1]):       # (np.unique's arrays only when there are duplicates)
            ux, inverse, counts = np.unique(xs, return_inverse=True, return_counts=True)
            ndup = int(xs.size - ux.size)
            dup_line = int(np.min(line_of[order][np.isin(inverse, np.flatnonzero(counts > 1))]))
            ys = np.bincount(inverse, weights=ys) / counts
            xs = ux
            warnings.append(f"averaged {ndup} duplicate x value{'s' if ndup > 1 else ''} (first "
                            f"at line {dup_line + 1})")
            if xs.size < MIN_POINTS:
                raise self._err(f"only {xs.size} distinct x values; at least {MIN_POINTS} are "
                                "needed", column=label, fix="export the whole spectrum")
        return Spectrum(x=xs, y=ys, x_unit=xunit, quantity=q, y_unit=yu, source=self.name,
                        sha256=self.sha256, column=label, metadata=dict(meta),
                        warnings=warnings, sample=sample)
