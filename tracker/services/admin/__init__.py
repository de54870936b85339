"""The lab's set-up and safekeeping: people, places, materials, logins, settings, backups."""
