-- shardlog schema (lookup upkeep): a lookup entry can be retired. A retired entry is hidden
-- from the pick-lists of new work but kept, so that the records that hold its code still show
-- its label. Codes never change once made; labels may. 0 = in use, 1 = retired.

ALTER TABLE lookup ADD COLUMN retired INTEGER NOT NULL DEFAULT 0 CHECK (retired IN (0, 1));
