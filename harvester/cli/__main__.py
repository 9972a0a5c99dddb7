"""``python -m harvester.cli`` runs the command line."""

from harvester.cli.app import main

__all__: list[str] = []

if __name__ == "__main__":
    main()
