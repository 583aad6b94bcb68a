"""The rig: description, virtual rig, components, imaging and camera choice."""
