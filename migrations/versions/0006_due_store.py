"""due board and overview: the due items as last worked out, per site, and the day of
the last full pass; indexes for the overview's counts and levels

Revision ID: 0006
Revises: 0005
Create Date: 2026-12-02 02:10:00

Both tables are derived data: empty after the upgrade, and filled for a site on the
first read of its due items (services.due).
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op


revision = "0006"
down_revision = "0005"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "due_item",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("site_id", sa.Integer(), nullable=False),
        sa.Column("machine_id", sa.Integer(), nullable=True),
        sa.Column("due", sa.Date(), nullable=False),
        sa.Column("kind", sa.String(length=30), nullable=False),
        sa.Column("safeguard_id", sa.Integer(), nullable=True),
        sa.Column("last_done", sa.Date(), nullable=True),
        sa.Column("interval_days", sa.Integer(), nullable=True),
        sa.Column("tag", sa.String(length=40), nullable=True),
        sa.Column("label", sa.String(length=200), nullable=True),
        sa.Column("machine_name", sa.String(length=120), nullable=True),
        sa.Column("area", sa.String(length=120), nullable=True),
        sa.Column("text", sa.Text(), nullable=True),
        sa.Column("serial", sa.String(length=120), nullable=True),
        sa.Column("n", sa.Integer(), nullable=True),
        sa.Column("trusted", sa.Boolean(), nullable=True),
        sa.Column("ref", sa.Integer(), nullable=True),
        sa.Column("years", sa.Float(), nullable=True),
        sa.ForeignKeyConstraint(
            ["machine_id"],
            ["machine.id"],
            name=op.f("fk_due_item_machine_id_machine"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["site_id"], ["site.id"], name=op.f("fk_due_item_site_id_site"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_due_item")),
    )
    with op.batch_alter_table("due_item", schema=None) as batch_op:
        batch_op.create_index("ix_due_item_order", ["site_id", "due"], unique=False)
        batch_op.create_index(batch_op.f("ix_due_item_machine_id"), ["machine_id"], unique=False)

    with op.batch_alter_table("hazard", schema=None) as batch_op:
        batch_op.create_index(
            "ix_hazard_overview", ["assessment_id", "archived", "residual_accepted_at"], unique=False
        )
    with op.batch_alter_table("risk_rating", schema=None) as batch_op:
        batch_op.create_index(
            "ix_risk_rating_overview",
            ["hazard_id", "stage", "superseded", "method", "override_level", "derived_level"],
            unique=False,
        )

    op.create_table(
        "due_refresh",
        sa.Column("site_id", sa.Integer(), nullable=False),
        sa.Column("computed_for", sa.Date(), nullable=True),
        sa.ForeignKeyConstraint(
            ["site_id"], ["site.id"], name=op.f("fk_due_refresh_site_id_site"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("site_id", name=op.f("pk_due_refresh")),
    )


def downgrade() -> None:
    with op.batch_alter_table("risk_rating", schema=None) as batch_op:
        batch_op.drop_index("ix_risk_rating_overview")
    with op.batch_alter_table("hazard", schema=None) as batch_op:
        batch_op.drop_index("ix_hazard_overview")
    op.drop_table("due_refresh")
    with op.batch_alter_table("due_item", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_due_item_machine_id"))
        batch_op.drop_index("ix_due_item_order")
    op.drop_table("due_item")
