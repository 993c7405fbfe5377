"""Halo response to the galaxy: adiabatic contraction (and expansion), differentiable."""

from lensinfer.contraction.contracted import ContractedHalo, ScaledProfile, contract_halo
from lensinfer.contraction.prescriptions import PRESCRIPTIONS, Prescription

__all__ = ["PRESCRIPTIONS", "ContractedHalo", "Prescription", "ScaledProfile", "contract_halo"]
