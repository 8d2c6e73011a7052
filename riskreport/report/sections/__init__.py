"""The brief section by section: each module phrases one section's numbers, owns its row
types and its charts' captions and alt texts."""
