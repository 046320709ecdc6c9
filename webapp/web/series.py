from flask import Blueprint

bp = Blueprint("series", __name__)
