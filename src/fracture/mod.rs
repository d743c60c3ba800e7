//! Fracture-mechanics core: mirror, flaw, residual stress, materials, uncertainty. Pure.
