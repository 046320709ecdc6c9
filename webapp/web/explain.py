from flask import Blueprint

bp = Blueprint("explain", __name__)
