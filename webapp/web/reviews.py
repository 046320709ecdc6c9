from flask import Blueprint

bp = Blueprint("reviews", __name__)
