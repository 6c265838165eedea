-- Accounts: the password set at first start must be changed at first
-- sign-in (1 until the user sets their own).
ALTER TABLE users ADD COLUMN must_change_password INTEGER NOT NULL DEFAULT 0;
