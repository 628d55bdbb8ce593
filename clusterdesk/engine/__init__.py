"""The mathematics of ClusterDesk: normal mixtures, EM fitting and model criteria (numpy and scipy only)."""
