"""``python -m qhdesign`` runs the command line."""

from qhdesign.cli import main

if __name__ == "__main__":
    main()
