from flask import Blueprint

bp = Blueprint("rules", __name__)
