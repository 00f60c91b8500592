"""Pages of the PWA. Thin: each view asks a selector or a service and renders."""
