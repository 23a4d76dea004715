"""The bundled sample schedules (demo data, invented for this project), shipped with balancer as
``balancer.samples`` so that ``balancer demo`` runs from an installed copy."""
