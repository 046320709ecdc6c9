from flask import Blueprint

bp = Blueprint("home", __name__)
